package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/fit"
	"gelspace/configs"
)

type fitOpts struct {
	configFlags
	config   string
	out      string
	seeds    int
	maxEvals int
	fix      []string
}

// Defaults of gelspace fit: a 40³ box, three seeds, 120 evaluations.
const (
	fitDefaultVoxels = 40
	fitDefaultSeeds  = 3
	fitDefaultEvals  = 120
)

func fitCommand() *command {
	return &command{
		name:    "fit",
		args:    "MEASURED.csv [--config CONFIG] [--out DIR] [flags]",
		summary: "calibrate the kinetic multipliers to a measured isothermal calorimetry curve",
		examples: `  gelspace fit testdata/fit/rw-g-heat-20c.csv --out fit-rw-g      # embedded default mix
  gelspace fit lab.csv --config my.toml --seeds 4 --max-evals 200 --out fit
  gelspace fit lab.csv --fix through_product_scale=1 --out fit      # hold a known multiplier
MEASURED.csv: a header row with time_h and one of heat_j_per_g (cumulative, J/g of
cement), heat_flow_mw_per_g (mW/g) or alpha (degree of hydration); at least 5 rows,
times increasing, cumulative curves never decreasing. The config gives the mix and
the temperature of the test; the box defaults to 40³ voxels (--size) for speed.
Writes DIR/fit.toml (a [kinetics] fragment to paste into the config), fit.json and fit.png.
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &fitOpts{}
			fs.StringVarP(&o.config, "config", "c", "", "run config with the mix and curing temperature (default: the embedded default)")
			fs.StringVarP(&o.out, "out", "o", "gelspace-fit", "output folder")
			fs.IntVar(&o.seeds, "seeds", fitDefaultSeeds, "boxes (seeds) averaged per evaluation, 1–16")
			fs.IntVar(&o.maxEvals, "max-evals", fitDefaultEvals, "model evaluations at most, 10–10000")
			fs.StringArrayVar(&o.fix, "fix", nil, "hold a multiplier at a known value: KEY=VALUE, KEY one of dissolution_scale, nucleation_scale, through_product_scale (repeatable)")
			addConfigFlags(fs, &o.configFlags)
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runFit(opts.(*fitOpts), fs, stdout)
		},
	}
}

func runFit(o *fitOpts, fs *pflag.FlagSet, stdout io.Writer) error {
	if fs.NArg() != 1 {
		return &usageError{fmt.Sprintf("fit: takes one MEASURED.csv, got %d arguments; see gelspace fit --help", fs.NArg())}
	}
	if o.seeds < 1 || o.seeds > 16 {
		return &usageError{fmt.Sprintf("fit: --seeds %d: must be between 1 and 16", o.seeds)}
	}
	if o.maxEvals < 10 || o.maxEvals > 10000 {
		return &usageError{fmt.Sprintf("fit: --max-evals %d: must be between 10 and 10000", o.maxEvals)}
	}
	// The output folder is checked before the (long) fit, not after it.
	if o.out == "" {
		return &usageError{"fit: --out must name a folder"}
	}
	if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
		return &usageError{fmt.Sprintf("fit: --out %s exists and is not a folder", o.out)}
	}
	fixed, fixSets, err := parseFixes(o.fix)
	if err != nil {
		return err
	}
	curve, err := fit.ReadMeasured(fs.Arg(0))
	if err != nil {
		return err
	}
	sets := []string{fmt.Sprintf("box.voxels=%d", fitDefaultVoxels)}
	sets = append(sets, o.sets...)
	if fs.Changed("seed") {
		if o.seed < 0 {
			return &usageError{fmt.Sprintf("fit: --seed %d: must be ≥ 0", o.seed)}
		}
		sets = append(sets, fmt.Sprintf("seed=%d", o.seed))
	}
	if fs.Changed("size") {
		if err := checkSize("fit", o.size); err != nil {
			return err
		}
		sets = append(sets, fmt.Sprintf("box.voxels=%d", o.size))
	}
	// The run ends at the last measured time; output ages beyond it are
	// dropped (fit records none).
	last := curve.TimeH[len(curve.TimeH)-1]
	sets = append(sets, fmt.Sprintf("curing.until_h=%g", last), "output.times_h=[]")
	sets = append(sets, fixSets...)
	cfg, err := configs.Load(o.config, sets)
	if err != nil {
		return err
	}
	if err := fitMemory(cfg.Box.Voxels, o.seeds); err != nil {
		return err
	}
	start := time.Now()
	res, err := fit.Calibrate(cfg, curve, o.seeds, fit.Settings{MaxEvals: o.maxEvals, Simplex: 0.4, Tol: 1e-4, Fixed: fixed, Staged: true, Prior: fit.DefaultPrior})
	if err != nil {
		return err
	}
	res.WallS = time.Since(start).Seconds()
	if err := fit.WriteOutputs(o.out, res); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(stdout, "fitted %s (%d rows) in %d evaluations, %.0f s: dissolution_scale %.3g, nucleation_scale %.3g, through_product_scale %.3g; misfit %.3g (from %.3g) → %s\n",
			curve.File, len(curve.TimeH), res.Evaluations, res.WallS, res.Fitted[fit.MultiplierKeys[0]], res.Fitted[fit.MultiplierKeys[1]], res.Fitted[fit.MultiplierKeys[2]],
			res.Misfit, res.MisfitStart, filepath.Join(o.out, "fit.toml"))
		var weak []string
		for _, k := range fit.MultiplierKeys {
			if !res.Determined[k] && !slices.Contains(res.Fixed, k) {
				weak = append(weak, k)
			}
		}
		if len(weak) > 0 {
			fmt.Fprintf(stdout, "note: the misfit hardly moves when %s is scaled by 0.8 or 1.25 (see fit.json sensitivity): poorly determined by this curve; try more --seeds or a bigger --size\n", strings.Join(weak, ", "))
		}
	}
	return nil
}

// parseFixes reads the --fix values: which multipliers are held, and the
// config settings (kinetics.KEY=VALUE) that hold them.
func parseFixes(fix []string) (fixed [3]bool, sets []string, err error) {
	for _, f := range fix {
		key, val, ok := strings.Cut(f, "=")
		key = strings.TrimPrefix(strings.TrimSpace(key), "kinetics.")
		i := slices.Index(fit.MultiplierKeys[:], key)
		if !ok || i < 0 {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %q: want KEY=VALUE with KEY one of %s", f, strings.Join(fit.MultiplierKeys[:], ", "))}
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
		if err != nil || !(v > 0 && v <= 1000) {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %s=%s: the value must be a number > 0 and ≤ 1000", key, val)}
		}
		if fixed[i] {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %s given twice", key)}
		}
		fixed[i] = true
		sets = append(sets, fmt.Sprintf("kinetics.%s=%g", key, v))
	}
	return fixed, sets, nil
}

// fitBytesPerVoxel is the memory a fit takes per voxel of each seed's box,
// resident: the packed box kept for the whole fit, the clone an evaluation
// hydrates and its engine, all seeds side by side (measured: 100 MB for
// two 100³ boxes).
const fitBytesPerVoxel = 50

// fitMemory refuses, before packing, a fit whose boxes would not fit in
// the memory available, naming --size and --seeds.
func fitMemory(n, seeds int) error {
	nf := float64(n)
	need, avail := nf*nf*nf*float64(seeds)*fitBytesPerVoxel, float64(configs.AvailableBytes())
	if need <= avail {
		return nil
	}
	return &usageError{fmt.Sprintf("fit: --size %d with --seeds %d: %d boxes of %d³ voxels need about %.1f GB and %.1f GB is available: give a smaller --size or fewer --seeds", n, seeds, seeds, n, need/1e9, avail/1e9)}
}
