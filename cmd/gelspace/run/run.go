package run

import (
	"bytes"
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

	"gelspace/configs"
	"gelspace/render"
	"gelspace/voxel"
)

// Files of a run folder that resume reads.
const (
	ManifestFile   = "run.json"
	CheckpointFile = "checkpoint.gsck"
)

// Manifest is run.json: what a resume needs to rebuild the settings.
type Manifest struct {
	Version         string   `json:"version"`
	ConfigName      string   `json:"config_name"`
	ConfigDir       string   `json:"config_dir"`
	ConfigText      string   `json:"config_text"`
	Sets            []string `json:"sets"`
	From            string   `json:"from,omitempty"`
	CheckpointEvery string   `json:"checkpoint_every,omitempty"`
	// NoRender: the run writes tables and volumes only (kept by --resume).
	NoRender bool `json:"no_render,omitempty"`
	// Complete is set when every output of the run is written; a folder
	// whose run.json says false holds an unfinished run.
	Complete bool `json:"complete"`
}

// CheckpointPolicy says when a run saves a checkpoint: every SimH
// simulated hours or every Wall of wall-clock time (zero: not by that
// measure).
type CheckpointPolicy struct {
	SimH float64
	Wall time.Duration
}

// Memory a run takes, as resident memory: a fixed part (the program, the
// runtime, images and tables) and a part per voxel, the larger of the
// hydration's and the D/D0 solve's. While the set point or depercolation
// is refined, hydration holds two engines (the replay's base and its
// step; 15 bytes per voxel each, BenchmarkHydrate100, the particle map of
// 4 bytes shared), the engine of the present age shelved as its
// checkpoint (about 2 bytes) and the labelling (5 bytes). The D/D0 solve
// holds the lattice's phases, the shelved engine and its own vectors and
// multigrid levels; the labelling is let go once the spanning clusters
// are known (BenchmarkDiffusivityHydrated100). The live heap's peak, read
// off the collector's trace with the limit set below it, grew by 38 bytes
// per voxel from 100³ to 160³ with D/D0 and by 36.5 without (runs to
// 168 h; see README, Performance). The command holds the garbage
// collector to the heap limit below (a soft memory limit), so the heap
// stays near its live size; the constants leave the collector a little
// room above it. The resident peak exceeds the heap limit by the program
// text, the runtime's own memory and the pages the collector has freed
// but not yet returned: by 10.2 MB at 100³, 13.2 MB at 160³ and 73.9 MB
// at 300³ with D/D0 (GNU time's maximum resident set size), which the
// resident constants cover.
const (
	runFixedBytes     = 32 << 20
	runBytesPerVoxel  = 40
	diffBytesPerVoxel = 40 // replaces runBytesPerVoxel when D/D0 is computed

	residentFixedBytes    = 8e6
	residentBytesPerVoxel = 2.5
)

// CheckMemory refuses, before anything is allocated, a box whose run
// would not fit in the memory available (a *configs.InputError on
// box.voxels).
func CheckMemory(cfg *configs.Config) error {
	if msg := MemoryShortfall(cfg.Box.Voxels, cfg.Output.Diffusivity); msg != "" {
		return cfg.Errorf("box.voxels", "%s", msg)
	}
	return nil
}

// HeapLimit returns the soft memory limit, in bytes, that the command
// sets for a run of an n³ box, with or without D/D0.
func HeapLimit(n int, diffusivity bool) float64 {
	nf := float64(n)
	return runFixedBytes + nf*nf*nf*heapPerVoxel(diffusivity)
}

// heapPerVoxel returns the heap limit's bytes per voxel.
func heapPerVoxel(diffusivity bool) float64 {
	if diffusivity {
		return diffBytesPerVoxel
	}
	return runBytesPerVoxel
}

// MemoryNeed returns the resident memory, in bytes, that a run of an n³
// box is expected to take, with or without D/D0: its heap limit and the
// resident memory above it.
func MemoryNeed(n int, diffusivity bool) float64 {
	nf := float64(n)
	return HeapLimit(n, diffusivity) + residentFixedBytes + nf*nf*nf*residentBytesPerVoxel
}

// MemoryShortfall returns, when a run of an n³ box would not fit in the
// memory available, the message saying so ("" when it fits).
func MemoryShortfall(n int, diffusivity bool) string {
	need, avail := MemoryNeed(n, diffusivity), float64(configs.AvailableBytes())
	if need <= avail {
		return ""
	}
	per := heapPerVoxel(diffusivity) + residentBytesPerVoxel
	max := int(math.Cbrt(max(avail-runFixedBytes-residentFixedBytes, 0) / per))
	return fmt.Sprintf("%d: a run of %d³ voxels needs about %.1f GB and %.1f GB is available: at most %d here%s", n, n, need/1e9, avail/1e9, max, DiffusivityHint(diffusivity))
}

// DiffusivityHint returns the advice to turn D/D0 off, for a message
// about memory, when that lowers a run's need ("" when it does not).
func DiffusivityHint(diffusivity bool) string {
	if diffusivity && diffBytesPerVoxel > runBytesPerVoxel {
		return " (or set output.diffusivity = false)"
	}
	return ""
}

// Options steer Run. The zero value packs a new box from the config,
// writes the tables and volumes without images, saves no checkpoint,
// reports no progress and uses all cores.
type Options struct {
	// Out is the output folder, created if need be. It must be given.
	Out string
	// From names a folder holding a saved pack (pack.vti, as gelspace
	// pack writes it) to hydrate instead of packing anew; "" packs.
	From string
	// Resume continues the stopped run in Out from its checkpoint, or
	// starts it again when it stopped before its first one; a run already
	// complete is an error.
	Resume bool
	// Force lets a new run replace the outputs of another run in Out;
	// without it such a folder is refused.
	Force bool
	// Checkpoint says when to save a checkpoint; the zero value never
	// does.
	Checkpoint CheckpointPolicy
	// Images writes the slice images, plots, time-lapse and report page
	// besides the tables and volumes.
	Images bool
	// Workers bounds the goroutines of the diffusivity solve and of the
	// image rendering; 0 means all cores. Sweeps, which run one point per
	// core, pass 1. Results do not depend on it.
	Workers int
	// Manifest is written as run.json (what a resume needs); nil writes
	// NewManifest(cfg).
	Manifest *Manifest
	// Progress, when not nil, is called after every sample age reached.
	Progress func(Progress)
	// AfterCheckpoint, when not nil, is called after each checkpoint is
	// saved; an error from it stops the run there, as a kill would (tests
	// use it).
	AfterCheckpoint func() error
	// AfterOutputs, when not nil, is called when every output is written,
	// before the run is marked complete; an error from it stops the run
	// there (tests use it).
	AfterOutputs func() error
}

// Progress is the state of a running hydration, passed to
// Options.Progress.
type Progress struct {
	TimeH          float64 // age reached, h
	UntilH         float64 // age at which the run stops, h
	Alpha          float64 // degree of hydration, 0–1
	HeatFlowMWPerG float64 // heat flow over the last sample interval, mW per g of cement
}

// Result is what a finished run reports besides its files: the state at
// the end and the two refined events.
type Result struct {
	TimeH             float64 // age at the end, h
	Alpha             float64 // degree of hydration at the end, 0–1
	HeatJPerG         float64 // cumulative heat at the end, J per g of cement
	CapillaryPorosity float64 // water- and empty-filled volume fraction at the end
	// Set is the set point (the solids first connect across all three
	// axes); nil when the paste did not set within the run.
	Set *Transition
	// Depercolation is the age at which the capillary pores stop spanning
	// the box; nil when they are still connected at the end.
	Depercolation *Transition
	WallS         float64 // wall-clock time of the hydration, s
}

// NewManifest returns the run.json of a run of cfg: its name, folder and
// text, with the version.
func NewManifest(cfg *configs.Config) (*Manifest, error) {
	var text []byte
	if r := cfg.Raw(); r != nil {
		var err error
		if text, err = toml.Marshal(r.Tree); err != nil {
			return nil, err
		}
	}
	return &Manifest{Version: Version, ConfigName: cfg.Source, ConfigDir: cfg.Dir, ConfigText: string(text)}, nil
}

// Run packs (or loads) and hydrates the paste of cfg and writes every
// output into o.Out: series.csv (one row per output age), samples.csv
// (every sample age), summary.json, final.vti, final.npy, phases.csv and
// run.json, with o.Images the slices, plots and report too. It is the
// whole of gelspace run without the command line; sweeps call it for each
// point. It prints nothing. Bad input (a pack that does not match the
// config, a missing checkpoint) is a *configs.InputError.
func Run(cfg *configs.Config, o Options) (*Result, error) {
	if o.Out == "" {
		return nil, errors.New("run: Options.Out must name a folder")
	}
	man := o.Manifest
	if man == nil {
		var err error
		if man, err = NewManifest(cfg); err != nil {
			return nil, err
		}
		man.From, man.NoRender = o.From, !o.Images
	}
	m, err := Resolve(cfg)
	if err != nil {
		return nil, err
	}
	set, err := cfg.EngineSettings()
	if err != nil {
		return nil, err
	}
	start := time.Now()
	var h *hydration
	resumed := false
	if o.Resume {
		if _, err := os.Stat(filepath.Join(o.Out, ManifestFile)); err != nil {
			return nil, &configs.InputError{File: o.Out, Msg: "no run to resume here (no run.json)"}
		}
		if man.Complete {
			// A stop just after run.json was marked complete can leave the
			// checkpoint and temporary files behind: they go now.
			os.Remove(filepath.Join(o.Out, CheckpointFile))
			removeTemps(o.Out)
			return nil, &configs.InputError{File: filepath.Join(o.Out, ManifestFile), Msg: "the run is complete: nothing to resume"}
		}
		e, extra, ok, err := readResumeState(o.Out, cfg, man, set)
		if err != nil {
			return nil, err
		}
		if ok {
			h = newHydration(cfg, set, e)
			h.workers = o.Workers
			if err := h.unmarshalState(extra); err != nil {
				return nil, &configs.InputError{File: filepath.Join(o.Out, CheckpointFile), Msg: "checkpoint progress record: " + err.Error()}
			}
			resumed = true
			if err := removeTemps(o.Out); err != nil {
				return nil, err
			}
		}
	} else if err := prepareOut(o.Out, o.Force); err != nil {
		return nil, err
	}
	if !resumed {
		var g *voxel.Grid
		if o.From != "" {
			path := filepath.Join(o.From, "pack.vti")
			if g, err = voxel.ReadVolume(path); err != nil {
				return nil, VolumeError(path, err)
			}
			if g.NX != cfg.Box.Voxels || g.NY != cfg.Box.Voxels || g.NZ != cfg.Box.Voxels || g.VoxelUM != cfg.Box.VoxelUM {
				return nil, &configs.InputError{File: path, Key: "box", Msg: fmt.Sprintf("the pack is %d×%d×%d voxels of %g µm, the config says %d³ of %g µm: use the config the pack was made with", g.NX, g.NY, g.NZ, g.VoxelUM, cfg.Box.Voxels, cfg.Box.VoxelUM)}
			}
			if err := checkPackMix(o.From, m); err != nil {
				return nil, err
			}
		} else {
			res, err := Pack(m)
			if err != nil {
				return nil, err
			}
			g = res.Grid
		}
		e, err := m.NewEngine(g, set)
		if err != nil {
			return nil, &configs.InputError{File: cfg.Source, Key: "kinetics", Msg: err.Error()}
		}
		h = newHydration(cfg, set, e)
		h.workers = o.Workers
		if err := h.start(); err != nil {
			return nil, err
		}
		if err := os.MkdirAll(o.Out, 0o755); err != nil {
			return nil, err
		}
		if o.Resume {
			// Started again from the beginning: no stale checkpoint or
			// temporary file may survive.
			os.Remove(filepath.Join(o.Out, CheckpointFile))
			if err := removeTemps(o.Out); err != nil {
				return nil, err
			}
		}
		man.Complete = false
		if err := render.WriteFileAtomic(filepath.Join(o.Out, ManifestFile), func(w io.Writer) error { return WriteJSON(w, man) }); err != nil {
			return nil, err
		}
	}
	id := identity(cfg, man)
	guardEngine(h.e, MaxEventsPerVoxelS)
	policy := o.Checkpoint
	lastCk, lastWall := h.e.TimeH(), time.Now()
	for {
		more, err := h.step()
		if err != nil {
			return nil, err
		}
		if !more {
			break
		}
		if o.Progress != nil {
			last := h.st.Samples[len(h.st.Samples)-1]
			o.Progress(Progress{TimeH: h.e.TimeH(), UntilH: cfg.Curing.UntilH, Alpha: h.e.Alpha(), HeatFlowMWPerG: last[colFlow]})
		}
		due := policy.SimH > 0 && h.e.TimeH()-lastCk >= policy.SimH-1e-9 || policy.Wall > 0 && time.Since(lastWall) >= policy.Wall
		if due && h.st.Next < len(h.ages) {
			h.st.WallS += time.Since(start).Seconds()
			start = time.Now()
			if err := saveCheckpoint(o.Out, h, id); err != nil {
				return nil, err
			}
			lastCk, lastWall = h.e.TimeH(), time.Now()
			if o.AfterCheckpoint != nil {
				if err := o.AfterCheckpoint(); err != nil {
					return nil, err
				}
			}
		}
	}
	h.st.WallS += time.Since(start).Seconds()
	if policy.SimH > 0 || policy.Wall > 0 {
		// A stop while the outputs are written resumes from here.
		if err := saveCheckpoint(o.Out, h, id); err != nil {
			return nil, err
		}
		if o.AfterCheckpoint != nil {
			if err := o.AfterCheckpoint(); err != nil {
				return nil, err
			}
		}
	}
	if err := writeRunOutputs(o.Out, m, h, o.Images); err != nil {
		return nil, err
	}
	if o.AfterOutputs != nil {
		if err := o.AfterOutputs(); err != nil {
			return nil, err
		}
	}
	man.Complete = true
	if err := render.WriteFileAtomic(filepath.Join(o.Out, ManifestFile), func(w io.Writer) error { return WriteJSON(w, man) }); err != nil {
		return nil, err
	}
	os.Remove(filepath.Join(o.Out, CheckpointFile))
	if err := removeTemps(o.Out); err != nil {
		return nil, err
	}
	last := h.st.Samples[len(h.st.Samples)-1]
	return &Result{TimeH: last[colTime], Alpha: last[colAlpha], HeatJPerG: last[colHeat], CapillaryPorosity: last[colCapPor],
		Set: h.st.Set, Depercolation: h.st.Deperc, WallS: h.st.WallS}, nil
}

// saveCheckpoint writes the engine and the run's progress atomically.
func saveCheckpoint(dir string, h *hydration, id Identity) error {
	state, err := h.marshalState()
	if err != nil {
		return err
	}
	extra, err := wrapState(id, state)
	if err != nil {
		return err
	}
	return render.WriteFileAtomic(filepath.Join(dir, CheckpointFile), func(w io.Writer) error {
		return h.e.WriteCheckpoint(w, &h.set, extra)
	})
}

// ConfigFromManifest rebuilds a config from its text (as saved in
// run.json), applying the overrides in sets.
func ConfigFromManifest(name, dir string, data []byte, sets []string) (*configs.Config, error) {
	raw, err := configs.ParseRaw(name, dir, data)
	if err != nil {
		return nil, err
	}
	return configs.FromRaw(raw, sets)
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
