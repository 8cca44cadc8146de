package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/schollz/progressbar/v3"
	"github.com/spf13/pflag"

	"gelspace/voxel"
)

type runOpts struct {
	configFlags
	out             string
	from            string
	resume          string
	until           float64
	checkpointEvery string
	noRender        bool
}

// Files of a run folder that resume reads.
const (
	runManifest    = "run.json"
	checkpointFile = "checkpoint.gsck"
)

// manifest is run.json: what a resume needs to rebuild the settings.
type manifest struct {
	Version         string   `json:"version"`
	ConfigName      string   `json:"config_name"`
	ConfigDir       string   `json:"config_dir"`
	ConfigText      string   `json:"config_text"`
	Sets            []string `json:"sets"`
	From            string   `json:"from,omitempty"`
	CheckpointEvery string   `json:"checkpoint_every,omitempty"`
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
  gelspace run big.toml --checkpoint-every 24h --out big   # or 10m (wall-clock minutes)
  gelspace run --resume big                            # continue a stopped run
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &runOpts{}
			fs.StringVarP(&o.out, "out", "o", "gelspace-out", "output folder")
			fs.StringVar(&o.from, "from", "", "hydrate the pack saved in this folder (pack.vti) instead of packing anew")
			fs.StringVar(&o.resume, "resume", "", "continue the stopped run in this folder from its checkpoint")
			fs.Float64Var(&o.until, "until", 0, "stop at this age in hours (overrides curing.until_h)")
			fs.StringVar(&o.checkpointEvery, "checkpoint-every", "", "save a checkpoint every N simulated hours (24h) or wall-clock minutes (10m)")
			fs.BoolVar(&o.noRender, "no-render", false, "skip slice images, plots and report")
			addConfigFlags(fs, &o.configFlags)
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runRun(opts.(*runOpts), fs, stdout, stderr)
		},
	}
}

// checkpointPolicy says when to save: every SimH simulated hours or every
// Wall of wall-clock time.
type checkpointPolicy struct {
	SimH float64
	Wall time.Duration
}

func parseCheckpointEvery(s string) (checkpointPolicy, error) {
	if s == "" {
		return checkpointPolicy{}, nil
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
		return checkpointPolicy{}, bad
	}
	if unit == "h" {
		return checkpointPolicy{SimH: v}, nil
	}
	return checkpointPolicy{Wall: time.Duration(v * float64(time.Minute))}, nil
}

func runRun(o *runOpts, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
	var (
		man manifest
		cfg *Config
		err error
	)
	if o.resume != "" {
		if fs.NArg() > 0 || fs.Changed("set") || fs.Changed("seed") || fs.Changed("size") || fs.Changed("until") || fs.Changed("from") {
			return &usageError{"run: --resume takes the folder only; the config and flags are those the run started with"}
		}
		data, err := os.ReadFile(filepath.Join(o.resume, runManifest))
		if err != nil {
			return &InputError{File: filepath.Join(o.resume, runManifest), Msg: "cannot read the run manifest: is this a gelspace run folder?"}
		}
		if err := json.Unmarshal(data, &man); err != nil {
			return &InputError{File: filepath.Join(o.resume, runManifest), Msg: "malformed run manifest: " + err.Error()}
		}
		if man.Version != version {
			return &InputError{File: filepath.Join(o.resume, runManifest), Msg: fmt.Sprintf("written by gelspace %s; this is %s: resume with the same version", man.Version, version)}
		}
		if cfg, err = loadConfigText(man.ConfigName, man.ConfigDir, []byte(man.ConfigText), man.Sets); err != nil {
			return err
		}
		o.out = o.resume
		o.from = man.From
		if !fs.Changed("checkpoint-every") {
			o.checkpointEvery = man.CheckpointEvery
		}
	} else {
		if fs.Changed("until") {
			// --until shortens the run: the output ages beyond it go.
			if !(o.until > 0) {
				return &usageError{fmt.Sprintf("run: --until %g: must be > 0 hours", o.until)}
			}
			raw, err := LoadRaw(fs.Arg(0))
			if err != nil {
				return err
			}
			for _, s := range o.sets {
				if err := raw.Set(s); err != nil {
					return err
				}
			}
			base, err := raw.Decode()
			if err != nil {
				return err
			}
			o.sets = append(o.sets, fmt.Sprintf("curing.until_h=%g", o.until),
				"output.times_h="+tomlList(below(base.Output.TimesH, o.until)),
				"output.diffusivity_times_h="+tomlList(below(base.Output.DiffusivityTimesH, o.until)))
		}
		if cfg, err = o.load(fs, "run"); err != nil {
			return err
		}
		text, err := toml.Marshal(cfg.raw.Tree)
		if err != nil {
			return err
		}
		man = manifest{Version: version, ConfigName: cfg.Source, ConfigDir: cfg.Dir, ConfigText: string(text),
			Sets: nil, From: o.from, CheckpointEvery: o.checkpointEvery}
	}
	policy, err := parseCheckpointEvery(o.checkpointEvery)
	if err != nil {
		return err
	}
	if err := checkRunMemory(cfg); err != nil {
		return err
	}
	if o.out == "" {
		return &usageError{"run: --out must name a folder"}
	}
	if st, err := os.Stat(o.out); err == nil && !st.IsDir() {
		return &usageError{fmt.Sprintf("run: --out %s exists and is not a folder", o.out)}
	}
	h, err := executeRun(cfg, man, RunParams{Out: o.out, From: o.from, Resume: o.resume != "", Checkpoint: policy,
		Images: !o.noRender, Progress: !o.quiet, Stderr: stderr})
	if err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintln(stdout, runSummaryLine(h, o.out))
	}
	return nil
}

// Memory a run takes per voxel, as resident memory: measured on the
// default 100³ run (113 MB without D/D0, 357 MB with it), which includes the
// engine's lattice and classes (about 11 bytes, BenchmarkHydrate100) twice
// (a copy is kept for refining the set point and depercolation), the
// labelling and image buffers, the diffusivity solver's vectors and
// multigrid levels, and the garbage collector's headroom.
const (
	runBytesPerVoxel  = 120
	diffBytesPerVoxel = 250
)

// checkRunMemory refuses, before anything is allocated, a box whose run
// would not fit in the memory available.
func checkRunMemory(cfg *Config) error {
	n := float64(cfg.Box.Voxels)
	per := float64(runBytesPerVoxel)
	if cfg.Output.Diffusivity {
		per += diffBytesPerVoxel
	}
	need, avail := n*n*n*per, float64(availableBytes())
	if need > avail {
		max := int(math.Cbrt(avail / per))
		line := 0
		if cfg.raw != nil {
			line = cfg.raw.Line("box.voxels")
		}
		return &InputError{File: cfg.Source, Line: line, Key: "box.voxels",
			Msg: fmt.Sprintf("%d: a run of %d³ voxels needs about %.1f GB and %.1f GB is available: at most %d here (or set output.diffusivity = false)", cfg.Box.Voxels, cfg.Box.Voxels, need/1e9, avail/1e9, max)}
	}
	return nil
}

// afterCheckpoint, when set (by tests), runs after each checkpoint is
// saved; an error from it stops the run there, as a kill would.
var afterCheckpoint func() error

// RunParams steer executeRun.
type RunParams struct {
	Out        string           // output folder (created)
	From       string           // folder of a saved pack to hydrate, or ""
	Resume     bool             // continue from Out's checkpoint
	Checkpoint checkpointPolicy // when to save checkpoints (zero: never)
	Images     bool             // write slices, plots and report
	Progress   bool             // show a progress bar when Stderr is a terminal
	Stderr     io.Writer
	// Workers bounds the goroutines of the diffusivity solve and of the
	// image rendering; 0 means all cores. Sweeps, which run one point per
	// core, pass 1. Results do not depend on it.
	Workers int
}

// executeRun packs (or loads) and hydrates the paste of cfg and writes all
// outputs into p.Out. It is the whole of gelspace run without the command
// line; sweeps call it for each point. man is written as run.json.
func executeRun(cfg *Config, man manifest, p RunParams) (*hydration, error) {
	m, err := Resolve(cfg)
	if err != nil {
		return nil, err
	}
	set, err := engineSettings(cfg)
	if err != nil {
		return nil, err
	}
	start := time.Now()
	var h *hydration
	if p.Resume {
		path := filepath.Join(p.Out, checkpointFile)
		f, err := os.Open(path)
		if err != nil {
			return nil, &InputError{File: path, Msg: "no checkpoint to resume from (the run finished, or never saved one)"}
		}
		e, extra, err := voxel.ReadCheckpoint(f, set)
		f.Close()
		if err != nil {
			return nil, &InputError{File: path, Msg: err.Error()}
		}
		h = newHydration(cfg, set, e)
		h.workers = p.Workers
		if err := h.unmarshalState(extra); err != nil {
			return nil, &InputError{File: path, Msg: "checkpoint progress record: " + err.Error()}
		}
	} else {
		var g *voxel.Grid
		if p.From != "" {
			path := filepath.Join(p.From, "pack.vti")
			if g, err = voxel.ReadVolume(path); err != nil {
				return nil, &InputError{File: path, Msg: err.Error()}
			}
			if g.NX != cfg.Box.Voxels || g.NY != cfg.Box.Voxels || g.NZ != cfg.Box.Voxels || g.VoxelUM != cfg.Box.VoxelUM {
				return nil, &InputError{File: path, Key: "box", Msg: fmt.Sprintf("the pack is %d×%d×%d voxels of %g µm, the config says %d³ of %g µm: use the config the pack was made with", g.NX, g.NY, g.NZ, g.VoxelUM, cfg.Box.Voxels, cfg.Box.VoxelUM)}
			}
		} else {
			res, err := packMix(m)
			if err != nil {
				return nil, err
			}
			g = res.Grid
		}
		e, err := voxel.NewEngine(g, set)
		if err != nil {
			return nil, &InputError{File: cfg.Source, Key: "kinetics", Msg: err.Error()}
		}
		h = newHydration(cfg, set, e)
		h.workers = p.Workers
		if err := h.start(); err != nil {
			return nil, err
		}
		if err := os.MkdirAll(p.Out, 0o755); err != nil {
			return nil, err
		}
		if err := WriteFileAtomic(filepath.Join(p.Out, runManifest), func(w io.Writer) error { return writeJSON(w, man) }); err != nil {
			return nil, err
		}
	}
	var bar *progressbar.ProgressBar
	if p.Progress {
		bar = newRunBar(cfg.Curing.UntilH, p.Stderr)
	}
	policy := p.Checkpoint
	lastCk, lastWall := h.e.TimeH(), time.Now()
	for {
		more, err := h.step()
		if err != nil {
			return nil, err
		}
		if !more {
			break
		}
		if bar != nil {
			last := h.st.Samples[len(h.st.Samples)-1]
			bar.Describe(fmt.Sprintf("%7.1f h  α %.3f  %5.2f mW/g", h.e.TimeH(), h.e.Alpha(), last[colFlow]))
			bar.Set64(int64(h.e.TimeH() * 10))
		}
		due := policy.SimH > 0 && h.e.TimeH()-lastCk >= policy.SimH-1e-9 || policy.Wall > 0 && time.Since(lastWall) >= policy.Wall
		if due && h.st.Next < len(h.ages) {
			h.st.WallS += time.Since(start).Seconds()
			start = time.Now()
			if err := saveCheckpoint(p.Out, h); err != nil {
				return nil, err
			}
			lastCk, lastWall = h.e.TimeH(), time.Now()
			if afterCheckpoint != nil {
				if err := afterCheckpoint(); err != nil {
					return nil, err
				}
			}
		}
	}
	if bar != nil {
		bar.Finish()
		fmt.Fprintln(p.Stderr)
	}
	h.st.WallS += time.Since(start).Seconds()
	if err := writeRunOutputs(p.Out, m, h, p.Images); err != nil {
		return nil, err
	}
	os.Remove(filepath.Join(p.Out, checkpointFile))
	return h, nil
}

// below returns the ages of ts that are at most limit.
func below(ts []float64, limit float64) []float64 {
	var out []float64
	for _, t := range ts {
		if t <= limit {
			out = append(out, t)
		}
	}
	return out
}

// tomlList formats numbers as a TOML array.
func tomlList(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = strconv.FormatFloat(x, 'g', -1, 64)
	}
	return "[" + strings.Join(parts, ", ") + "]"
}

// saveCheckpoint writes the engine and the run's progress atomically.
func saveCheckpoint(dir string, h *hydration) error {
	extra, err := h.marshalState()
	if err != nil {
		return err
	}
	return WriteFileAtomic(filepath.Join(dir, checkpointFile), func(w io.Writer) error {
		return h.e.WriteCheckpoint(w, &h.set, extra)
	})
}

// loadConfigText rebuilds a config from its text (as saved in run.json).
func loadConfigText(name, dir string, data []byte, sets []string) (*Config, error) {
	raw, err := ParseRaw(name, dir, data)
	if err != nil {
		return nil, err
	}
	return configFromRaw(raw, sets)
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

func runSummaryLine(h *hydration, dir string) string {
	var b strings.Builder
	last := h.st.Samples[len(h.st.Samples)-1]
	fmt.Fprintf(&b, "hydrated to %g h: α %.3f, heat %.0f J/g, capillary porosity %.3f", last[colTime], last[colAlpha], last[colHeat], last[colCapPor])
	if h.st.Set != nil {
		fmt.Fprintf(&b, "; set at %.2f h (α %.3f)", h.st.Set.TimeH, h.st.Set.Alpha)
	} else {
		b.WriteString("; no set within the run")
	}
	if h.st.Deperc != nil {
		fmt.Fprintf(&b, "; capillary pores depercolated at %.1f h (porosity %.3f)", h.st.Deperc.TimeH, h.st.Deperc.Porosity)
	} else {
		b.WriteString("; capillary pores still connected at the end")
	}
	fmt.Fprintf(&b, "; %.1f s → %s", h.st.WallS, dir)
	return b.String()
}

var errNoSamples = errors.New("run: no sample recorded")

// writeSeriesCSV writes rows with the series columns; NaN cells are empty.
func writeSeriesCSV(w io.Writer, rows [][]float64) error {
	var b bytes.Buffer
	b.WriteString(strings.Join(seriesColumns(), ","))
	b.WriteByte('\n')
	for _, r := range rows {
		for j, v := range r {
			if j > 0 {
				b.WriteByte(',')
			}
			if !math.IsNaN(v) {
				b.WriteString(strconv.FormatFloat(v, 'g', 8, 64))
			}
		}
		b.WriteByte('\n')
	}
	_, err := w.Write(b.Bytes())
	return err
}
