package main

import (
	"fmt"
	"io"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/pflag"

	"gelspace/cmd/gelspace/run"
	"gelspace/cmd/gelspace/sweep"
	"gelspace/configs"
)

type sweepOpts struct {
	out    string
	jobs   int
	images bool
	force  bool
	sets   []string
	size   int
	quiet  bool
}

func sweepCommand() *command {
	return &command{
		name: "sweep",
		args: "SWEEP.toml [--jobs N] [--out DIR] | sweep plan SWEEP.toml --out DIR | sweep collect DIR",
		summary: "run a parameter grid on all cores, resumable, with summary tables and plots; " +
			"or plan it for a cluster's scheduler and collect the results",
		examples: `  gelspace sweep configs/sweeps/wc-grind.toml --out wc-grind      # all cores; rerun to resume
  gelspace sweep configs/sweeps/wc-grind-small.toml --jobs 2 --out small
  gelspace sweep plan configs/sweeps/wc-grind.toml --out wc-grind  # slurm.sh, commands.txt
  sbatch wc-grind/slurm.sh                                         # or: cd wc-grind && parallel < commands.txt
  gelspace sweep collect wc-grind                                  # summary from the finished folders

Sweep file (TOML):
  base = "../default.toml"     # a run config, relative to the sweep file (absent: the embedded default)
  replicates = 3               # seeds per point: seed, seed+1, …
  [axes]                       # any config key: a list, or { from = , to = , step = } (inclusive)
  "mix.w_c" = { from = 0.35, to = 0.55, step = 0.05 }
  "psd.rosin_rammler" = [{ x_um = 10.0, n = 1.05 }, { x_um = 18.0, n = 1.05 }]
  # [zip] holds axes that vary together (equal lengths) instead of crossing
  # [set] gives keys one value for every point: "box.voxels" = 60
Outputs in DIR: summary.csv (one row per point and replicate), summary_stats.csv (mean, sd
and 95 % CI per point, Student t), plots/, points/pNNNN_rR/ (each run's config and outputs).
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &sweepOpts{}
			fs.StringVarP(&o.out, "out", "o", "", "sweep folder (default: the sweep file's name with -out, in the current folder)")
			fs.IntVarP(&o.jobs, "jobs", "j", runtime.NumCPU(), "points run at once (one per worker)")
			fs.BoolVar(&o.images, "images", false, "write each point's slices, plots and report (off: tables and volumes only)")
			fs.StringArrayVar(&o.sets, "set", nil, "override a key of the base config for every point: --set KEY=VALUE (repeatable)")
			fs.IntVar(&o.size, "size", 0, "box edge in voxels for every point (overrides box.voxels)")
			fs.BoolVarP(&o.quiet, "quiet", "q", false, "print nothing but errors")
			fs.BoolVar(&o.force, "force", false, "take over an --out folder made from another sweep file")
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runSweepCmd(opts.(*sweepOpts), fs, stdout, stderr)
		},
	}
}

func runSweepCmd(o *sweepOpts, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
	args := fs.Args()
	mode := "run"
	if len(args) > 0 && (args[0] == "plan" || args[0] == "collect") {
		mode, args = args[0], args[1:]
	}
	if len(args) != 1 {
		what := "SWEEP.toml"
		if mode == "collect" {
			what = "DIR"
		}
		name := "sweep"
		if mode != "run" {
			name += " " + mode
		}
		return &usageError{fmt.Sprintf("%s: takes one %s, got %d arguments; see gelspace sweep --help", name, what, len(args))}
	}
	if o.jobs < 1 {
		return &usageError{fmt.Sprintf("sweep: --jobs %d: must be ≥ 1", o.jobs)}
	}
	if mode == "collect" {
		if fs.Changed("set") || fs.Changed("size") || fs.Changed("images") || fs.Changed("out") {
			return &usageError{"sweep collect: takes the sweep folder only"}
		}
		return collectCmd(args[0], o.quiet, stdout)
	}
	if mode == "plan" && o.out == "" {
		return &usageError{"sweep plan: give the sweep folder with --out DIR"}
	}
	spec, err := sweep.Load(args[0])
	if err != nil {
		return err
	}
	sets := append([]string(nil), o.sets...)
	if fs.Changed("size") {
		sets = append(sets, fmt.Sprintf("box.voxels=%d", o.size))
	}
	pts, err := spec.Points(sets)
	if err != nil {
		return err
	}
	if o.out == "" {
		o.out = strings.TrimSuffix(filepath.Base(args[0]), filepath.Ext(args[0])) + "-out"
	}
	if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
		return &usageError{fmt.Sprintf("sweep: --out %s exists and is not a folder", o.out)}
	}
	if mode != "plan" {
		if err := sweepMemory(pts, o.jobs); err != nil {
			return err
		}
	}
	pl := sweep.NewPlan(spec, pts, o.images)
	if err := sweep.WritePlanForce(o.out, pl, pts, o.force); err != nil {
		return err
	}
	if err := sweep.WriteSchedulerFiles(o.out, pl); err != nil {
		return err
	}
	if mode == "plan" {
		if !o.quiet {
			fmt.Fprintf(stdout, "planned %d runs (%d points × %d replicates) in %s: sbatch %s, or cd %s && parallel < %s; then gelspace sweep collect %s\n",
				len(pts), spec.NumPoints(), spec.Replicates, o.out, filepath.Join(o.out, sweep.SlurmScriptFile), o.out, sweep.CommandsFile, o.out)
		}
		return nil
	}
	var bar *progressbar.ProgressBar
	if !o.quiet {
		bar = newSweepBar(len(pts), stderr)
	}
	start := time.Now()
	var progress func(done, total int, left time.Duration)
	if bar != nil {
		progress = func(done, total int, left time.Duration) {
			if left < 0 {
				bar.Describe("sweep (time left after the first runs)")
				if done > 0 {
					bar.Add(done)
				}
				bar.RenderBlank()
				return
			}
			bar.Describe(fmt.Sprintf("sweep, about %s left", left.Round(time.Second)))
			bar.Add(1)
		}
	}
	st, err := sweep.Run(o.out, pl, o.jobs, progress)
	if err != nil {
		return err
	}
	if bar != nil {
		bar.Finish()
		fmt.Fprintln(stderr)
	}
	rows, err := sweep.Collect(o.out, pl)
	if err != nil {
		return err
	}
	if err := sweep.WriteSummaries(o.out, pl, rows); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(stdout, "sweep: %d runs (%d already complete, %d run, %d failed) with %d jobs in %.1f s → %s\n",
			st.Total, st.Skipped, st.Ran, len(st.Failed), o.jobs, time.Since(start).Seconds(), filepath.Join(o.out, "summary_stats.csv"))
	}
	if len(st.Failed) > 0 {
		f := st.Failed[0]
		return fmt.Errorf("sweep: %d of %d runs failed (first, %s: %v); each failed folder has %s; rerun to retry them", len(st.Failed), st.Total, f.Name, f.Err, sweep.PointErrorFile)
	}
	return nil
}

func collectCmd(dir string, quiet bool, stdout io.Writer) error {
	pl, err := sweep.ReadPlan(dir)
	if err != nil {
		return err
	}
	rows, err := sweep.Collect(dir, pl)
	if err != nil {
		return err
	}
	if err := sweep.WriteSummaries(dir, pl, rows); err != nil {
		return err
	}
	var missing, failed []string
	for _, r := range rows {
		switch r.Status {
		case sweep.StatusMissing:
			missing = append(missing, r.P.Name)
		case sweep.StatusFailed:
			failed = append(failed, r.P.Name)
		}
	}
	if !quiet {
		fmt.Fprintf(stdout, "collected %d of %d runs → %s\n", len(rows)-len(missing)-len(failed), len(rows), filepath.Join(dir, "summary_stats.csv"))
	}
	if len(missing)+len(failed) > 0 {
		var parts []string
		if len(missing) > 0 {
			parts = append(parts, fmt.Sprintf("%d not finished (first %s)", len(missing), missing[0]))
		}
		if len(failed) > 0 {
			parts = append(parts, fmt.Sprintf("%d failed (first %s, see its %s)", len(failed), failed[0], sweep.PointErrorFile))
		}
		return fmt.Errorf("sweep collect: %s: %s; the summary lists them by status", dir, strings.Join(parts, ", "))
	}
	return nil
}

// newSweepBar returns a progress bar over runs, or nil when stderr is not
// a terminal. runSweep writes the time remaining into its description
// (the bar's own estimate, a rolling rate, suits fast items better than
// runs of minutes).
func newSweepBar(n int, stderr io.Writer) *progressbar.ProgressBar {
	f, ok := stderr.(*os.File)
	if !ok {
		return nil
	}
	if st, err := f.Stat(); err != nil || st.Mode()&os.ModeCharDevice == 0 {
		return nil
	}
	return progressbar.NewOptions(n,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetDescription("sweep"),
		progressbar.OptionSetWidth(30),
		progressbar.OptionShowCount(),
		progressbar.OptionThrottle(200*time.Millisecond),
		progressbar.OptionSetPredictTime(false),
		progressbar.OptionShowElapsedTimeOnFinish(),
	)
}

// sweepMemory refuses, before anything is written, a sweep whose jobs
// largest points would not fit in the memory available side by side.
func sweepMemory(pts []sweep.Point, jobs int) error {
	type need struct {
		name  string
		n     int
		bytes float64
		diff  bool
	}
	var needs []need
	for _, p := range pts {
		raw, err := configs.ParseRaw(p.Name, ".", p.Config)
		if err != nil {
			return err
		}
		cfg, err := raw.Decode()
		if err != nil {
			return err
		}
		needs = append(needs, need{p.Name, cfg.Box.Voxels, run.MemoryNeed(cfg.Box.Voxels, cfg.Output.Diffusivity), cfg.Output.Diffusivity})
	}
	sort.Slice(needs, func(i, j int) bool { return needs[i].bytes > needs[j].bytes })
	k := min(jobs, len(needs))
	total := 0.0
	for _, x := range needs[:k] {
		total += x.bytes
	}
	avail := float64(configs.AvailableBytes())
	if total <= avail {
		return nil
	}
	if k == 1 {
		return &usageError{fmt.Sprintf("sweep: point %s (%d³ voxels) needs about %.1f GB and %.1f GB is available: sweep smaller boxes%s", needs[0].name, needs[0].n, total/1e9, avail/1e9, run.DiffusivityHint(needs[0].diff))}
	}
	return &usageError{fmt.Sprintf("sweep: --jobs %d: the %d largest points (%s, %d³ voxels, …) need about %.1f GB side by side and %.1f GB is available: give fewer --jobs or smaller boxes", jobs, k, needs[0].name, needs[0].n, total/1e9, avail/1e9)}
}
