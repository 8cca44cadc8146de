package main

import (
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
)

type runOpts struct {
	configFlags
	out             string
	from            string
	resume          string
	until           float64
	checkpointEvery string
	noRender        bool
	force           bool
}

func runCommand() *command {
	return &command{
		name:    "run",
		args:    "[CONFIG] [--out DIR] [flags]",
		summary: "pack, hydrate, analyse and write series, summary, volumes, images and report",
		examples: `  gelspace run --out demo-run                          # embedded default (w/c 0.45, 20 °C, 28 d)
  gelspace run configs/rw-g-sealed-low-wc.toml --out sealed
  gelspace run my.toml --set mix.w_c=0.40 --set curing.temperature_c=35 --until 168
  gelspace run my.toml --from packed/ --out hyd      # hydrate a saved pack
  gelspace run configs/rw-g-blends.toml --out blend   # a blended binder: [[scm]] and mix.w_b
  gelspace run big.toml --checkpoint-every 24h --out big   # or 10m (wall-clock minutes)
  gelspace run --resume big                            # continue a stopped run
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &runOpts{}
			fs.StringVarP(&o.out, "out", "o", "gelspace-out", "output folder")
			fs.StringVar(&o.from, "from", "", "hydrate the pack saved in this folder (pack.vti) instead of packing anew")
			fs.StringVar(&o.resume, "resume", "", "continue the stopped run in this folder from its checkpoint")
			fs.Float64Var(&o.until, "until", 0, "stop at this age in hours (overrides curing.until_h; output ages past it are dropped and listed)")
			fs.StringVar(&o.checkpointEvery, "checkpoint-every", "", "save a checkpoint every N simulated hours (24h) or wall-clock minutes (10m)")
			fs.BoolVar(&o.noRender, "no-render", false, "skip slice images, plots and report")
			fs.BoolVar(&o.force, "force", false, "replace the outputs of another run in --out (without it such a folder is refused)")
			addConfigFlags(fs, &o.configFlags)
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runRun(opts.(*runOpts), fs, stdout, stderr)
		},
	}
}

func parseCheckpointEvery(s string) (run.CheckpointPolicy, error) {
	if s == "" {
		return run.CheckpointPolicy{}, nil
	}
	bad := &usageError{fmt.Sprintf("run: --checkpoint-every %q: give simulated hours (24h) or wall-clock minutes (10m), > 0", s)}
	var unit string
	num := s
	for _, u := range []string{"min", "h", "m"} {
		if strings.HasSuffix(s, u) {
			unit, num = u, strings.TrimSuffix(s, u)
			break
		}
	}
	v, err := strconv.ParseFloat(num, 64)
	if err != nil || !(v > 0) || math.IsInf(v, 0) || unit == "" {
		return run.CheckpointPolicy{}, bad
	}
	if unit == "h" {
		return run.CheckpointPolicy{SimH: v}, nil
	}
	return run.CheckpointPolicy{Wall: time.Duration(v * float64(time.Minute))}, nil
}

func runRun(o *runOpts, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
	var (
		man run.Manifest
		cfg *configs.Config
		err error
	)
	if o.resume != "" {
		for _, f := range []string{"set", "seed", "size", "until", "from", "out", "no-render", "force"} {
			if fs.Changed(f) {
				return &usageError{fmt.Sprintf("run: --resume takes the folder only, not --%s: the config and options are those the run started with", f)}
			}
		}
		if fs.NArg() > 0 {
			return &usageError{"run: --resume takes the folder only, not a CONFIG: the config and options are those the run started with"}
		}
		m, err := run.ReadManifest(o.resume)
		if err != nil {
			return err
		}
		man = *m
		if cfg, err = run.ConfigFromManifest(man.ConfigName, man.ConfigDir, []byte(man.ConfigText), man.Sets); err != nil {
			return err
		}
		o.out = o.resume
		o.from = man.From
		o.noRender = man.NoRender
		if !fs.Changed("checkpoint-every") {
			o.checkpointEvery = man.CheckpointEvery
		}
	} else {
		if fs.Changed("until") {
			// --until shortens the run: the output ages beyond it are
			// dropped when the config is loaded (Config.DroppedAgesH).
			if !(o.until > 0 && o.until <= configs.MaxUntilH) {
				return &usageError{fmt.Sprintf("run: --until %g: must be > 0 and ≤ %g hours", o.until, configs.MaxUntilH)}
			}
			o.sets = append(o.sets, fmt.Sprintf("curing.until_h=%g", o.until))
		}
		if cfg, err = o.load(fs, "run"); err != nil {
			return err
		}
		m, err := run.NewManifest(cfg)
		if err != nil {
			return err
		}
		man = *m
		man.From, man.CheckpointEvery, man.NoRender = o.from, o.checkpointEvery, o.noRender
	}
	policy, err := parseCheckpointEvery(o.checkpointEvery)
	if err != nil {
		return err
	}
	if err := runMemory(cfg, fs.Changed("size")); err != nil {
		return err
	}
	limitMemory(run.HeapLimit(cfg.Box.Voxels, cfg.Output.Diffusivity))
	if o.out == "" {
		return &usageError{"run: --out must name a folder"}
	}
	if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
		return &usageError{fmt.Sprintf("run: --out %s exists and is not a folder", o.out)}
	}
	opts := run.Options{Out: o.out, From: o.from, Resume: o.resume != "", Force: o.force, Checkpoint: policy,
		Images: !o.noRender, Manifest: &man, AfterCheckpoint: afterCheckpoint}
	var bar *progressbar.ProgressBar
	if !o.quiet {
		bar = newRunBar(cfg.Curing.UntilH, stderr)
	}
	if bar != nil {
		opts.Progress = func(p run.Progress) {
			bar.Describe(fmt.Sprintf("%7.1f h  α %.3f  %5.2f mW/g", p.TimeH, p.Alpha, p.HeatFlowMWPerG))
			bar.Set64(int64(p.TimeH * 10))
		}
	}
	res, err := run.Run(cfg, opts)
	if err != nil {
		return err
	}
	if bar != nil {
		bar.Finish()
		fmt.Fprintln(stderr)
	}
	// After the run, so that a bad input still gets a one-line message.
	if line := droppedAgesLine(cfg); line != "" && o.resume == "" {
		fmt.Fprintln(stderr, line)
	}
	if !o.quiet {
		fmt.Fprintln(stdout, runSummaryLine(res, o.out))
	}
	return nil
}

// newRunBar returns a progress bar over simulated hours, or nil when
// stderr is not a terminal (CI, pipes).
func newRunBar(untilH float64, stderr io.Writer) *progressbar.ProgressBar {
	f, ok := stderr.(*os.File)
	if !ok {
		return nil
	}
	if st, err := f.Stat(); err != nil || st.Mode()&os.ModeCharDevice == 0 {
		return nil
	}
	return progressbar.NewOptions64(int64(untilH*10),
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetDescription("hydrating"),
		progressbar.OptionSetWidth(30),
		progressbar.OptionThrottle(100*time.Millisecond),
		progressbar.OptionSetPredictTime(true),
		progressbar.OptionShowElapsedTimeOnFinish(),
	)
}

// afterCheckpoint, when set (by tests), runs after each checkpoint is
// saved; an error from it stops the run there, as a kill would.
var afterCheckpoint func() error

// runSummaryLine is the line gelspace run prints at the end.
func runSummaryLine(r *run.Result, dir string) string {
	var b strings.Builder
	fmt.Fprintf(&b, "hydrated to %g h: α %.3f, heat %.0f J/g, capillary porosity %.3f", r.TimeH, r.Alpha, r.HeatJPerG, r.CapillaryPorosity)
	if r.Set != nil {
		fmt.Fprintf(&b, "; set at %.2f h (α %.3f)", r.Set.TimeH, r.Set.Alpha)
	} else {
		b.WriteString("; no set within the run")
	}
	if r.Depercolation != nil {
		fmt.Fprintf(&b, "; capillary pores depercolated at %.1f h (porosity %.3f)", r.Depercolation.TimeH, r.Depercolation.Porosity)
	} else {
		b.WriteString("; capillary pores still connected at the end")
	}
	fmt.Fprintf(&b, "; %.1f s → %s", r.WallS, dir)
	return b.String()
}

// droppedAgesLine is the one line that lists the output ages past the end
// of the run, or "" when none was dropped.
func droppedAgesLine(cfg *configs.Config) string {
	if len(cfg.DroppedAgesH) == 0 {
		return ""
	}
	parts := make([]string, len(cfg.DroppedAgesH))
	for i, x := range cfg.DroppedAgesH {
		parts[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return fmt.Sprintf("gelspace run: output ages past the end of the run (%g h) dropped: %s h", cfg.Curing.UntilH, strings.Join(parts, ", "))
}
