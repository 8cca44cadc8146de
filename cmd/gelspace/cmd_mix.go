package main

import (
	"io"

	"github.com/spf13/pflag"
)

type mixOpts struct {
	configFlags
	json bool
}

func mixCommand() *command {
	return &command{
		name:    "mix",
		args:    "[CONFIG] [flags]",
		summary: "print the resolved mix: phase mass and volume %, densities, initial solid fraction, PSD statistics",
		examples: `  gelspace mix                               # the embedded default (Redhaven Works RW-G)
  gelspace mix configs/rw-f-oxides.toml      # phases from an oxide analysis (Bogue)
  gelspace mix my.toml --set mix.w_c=0.40 --json
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &mixOpts{}
			addConfigFlags(fs, &o.configFlags)
			fs.BoolVar(&o.json, "json", false, "print the mix as JSON")
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			o := opts.(*mixOpts)
			cfg, err := o.load(fs, "mix")
			if err != nil {
				return err
			}
			m, err := Resolve(cfg)
			if err != nil {
				return err
			}
			rep := m.Report()
			if o.json {
				return writeJSON(stdout, rep)
			}
			if !o.quiet {
				printMix(stdout, rep)
			}
			return nil
		},
	}
}
