package main

import (
	"fmt"
	"io"
	"os"
	"time"

	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
)

type packOpts struct {
	configFlags
	out string
}

func packCommand() *command {
	return &command{
		name:    "pack",
		args:    "[CONFIG] [--out DIR] [flags]",
		summary: "build and save the initial microstructure (pack.vti, pack.npy, phases.csv, pack.json)",
		examples: `  gelspace pack --out demo-out                          # embedded default, 96³ voxels
  gelspace pack configs/rw-g-psd-table.toml --out rw-g  # measured PSD table
  gelspace pack my.toml --size 200 --seed 3 --out big --set pack.grain_spacing_um=1
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &packOpts{}
			fs.StringVarP(&o.out, "out", "o", "gelspace-out", "output folder")
			addConfigFlags(fs, &o.configFlags)
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			o := opts.(*packOpts)
			if o.out == "" {
				return &usageError{"pack: --out must name a folder"}
			}
			if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
				return &usageError{fmt.Sprintf("pack: --out %s exists and is not a folder", o.out)}
			}
			cfg, err := o.load(fs, "pack")
			if err != nil {
				return err
			}
			m, err := run.Resolve(cfg)
			if err != nil {
				return err
			}
			start := time.Now()
			res, err := run.Pack(m)
			if err != nil {
				return err
			}
			wall := time.Since(start).Seconds()
			if err := run.WritePack(o.out, m, res, wall); err != nil {
				return err
			}
			if !o.quiet {
				fmt.Fprintf(stdout, "packed %d³ voxels of %g µm: %d particles, solid fraction %.4f, in %.2f s → %s\n",
					cfg.Box.Voxels, cfg.Box.VoxelUM, len(res.Diameter)-1, run.SolidFraction(res.Grid), wall, o.out)
			}
			return nil
		},
	}
}
