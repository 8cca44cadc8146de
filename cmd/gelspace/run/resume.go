package run

import (
	"bytes"
	"crypto/sha256"
	"encoding/gob"
	"encoding/hex"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"strings"

	"gelspace/configs"
	"gelspace/voxel"
)

// A run folder's life: run.json is written first with "complete": false;
// checkpoints are saved as the run goes (and one just before the outputs
// are written); every output goes through a temporary name; when the last
// output is in place run.json is rewritten with "complete": true and the
// checkpoint and any stray temporary files are removed. A folder whose
// run.json says false holds an unfinished run: --resume continues it from
// its checkpoint, or starts it again from the beginning when it stopped
// before its first checkpoint, which gives the same outputs byte for byte
// (the run is deterministic in its config and seed).

// Identity is what a checkpoint belongs to. A checkpoint is refused by a
// run with another identity, and run.json must match it.
type Identity struct {
	Version    string
	ConfigHash string // SHA-256 of the manifest's config text, overrides, pack folder and image choice
	Box        [3]int
	VoxelUM    float64
	Seed       int64
}

// ConfigHash returns the hash of what makes a run: the config text, the
// overrides, the pack it hydrates and whether it renders images.
func (m *Manifest) ConfigHash() string {
	h := sha256.New()
	fmt.Fprintf(h, "%q|%q|%q|%q|%v", m.ConfigName, m.ConfigText, strings.Join(m.Sets, "\x00"), m.From, m.NoRender)
	return hex.EncodeToString(h.Sum(nil))
}

// identity returns the identity of a run of cfg described by man.
func identity(cfg *configs.Config, man *Manifest) Identity {
	n := cfg.Box.Voxels
	return Identity{Version: Version, ConfigHash: man.ConfigHash(), Box: [3]int{n, n, n}, VoxelUM: cfg.Box.VoxelUM, Seed: cfg.Seed}
}

// stateMagic opens the run's part of a checkpoint.
const stateMagic = "gelspace run state 1\n"

type savedState struct {
	ID    Identity
	State []byte
}

func wrapState(id Identity, state []byte) ([]byte, error) {
	var b bytes.Buffer
	b.WriteString(stateMagic)
	err := gob.NewEncoder(&b).Encode(&savedState{ID: id, State: state})
	return b.Bytes(), err
}

// unwrapState checks the identity saved in a checkpoint against want
// and returns the run's progress record.
func unwrapState(b []byte, want Identity) ([]byte, error) {
	if !bytes.HasPrefix(b, []byte(stateMagic)) {
		return nil, errors.New("not a checkpoint of this gelspace version's runs")
	}
	var s savedState
	if err := gob.NewDecoder(bytes.NewReader(b[len(stateMagic):])).Decode(&s); err != nil {
		return nil, fmt.Errorf("progress record: %v", err)
	}
	got := s.ID
	switch {
	case got.Version != want.Version:
		return nil, fmt.Errorf("saved by gelspace %s, this is %s: resume with the same version", got.Version, want.Version)
	case got.Box != want.Box || got.VoxelUM != want.VoxelUM:
		return nil, fmt.Errorf("saved for a box of %d×%d×%d voxels of %g µm, the run is %d×%d×%d of %g µm: the checkpoint belongs to another run",
			got.Box[0], got.Box[1], got.Box[2], got.VoxelUM, want.Box[0], want.Box[1], want.Box[2], want.VoxelUM)
	case got.Seed != want.Seed:
		return nil, fmt.Errorf("saved for seed %d, the run has seed %d: the checkpoint belongs to another run", got.Seed, want.Seed)
	case got.ConfigHash != want.ConfigHash:
		return nil, errors.New("saved for another config than run.json describes: the checkpoint belongs to another run, or run.json was edited")
	}
	return s.State, nil
}

// ReadManifest reads and checks dir/run.json. Errors are InputErrors.
func ReadManifest(dir string) (*Manifest, error) {
	path := filepath.Join(dir, ManifestFile)
	data, err := configs.ReadLimited(path, "run manifest", 64<<20)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) || strings.Contains(err.Error(), "no such file") {
			return nil, &configs.InputError{File: path, Msg: "no run manifest: is this a gelspace run folder?"}
		}
		return nil, err
	}
	var man Manifest
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&man); err != nil {
		return nil, &configs.InputError{File: path, Msg: "malformed run manifest: " + err.Error()}
	}
	if man.Version != Version {
		return nil, &configs.InputError{File: path, Msg: fmt.Sprintf("written by gelspace %s; this is %s: resume with the same version", configs.Snippet(man.Version), Version)}
	}
	// The config text is checked here, so that a hand-edited one is blamed
	// on run.json rather than on the config file it was copied from.
	if _, err := configs.ParseRaw(man.ConfigName, man.ConfigDir, []byte(man.ConfigText)); err != nil {
		msg := err.Error()
		var ie *configs.InputError
		if errors.As(err, &ie) {
			msg = fmt.Sprintf("line %d: %s", ie.Line, ie.Msg)
		}
		return nil, &configs.InputError{File: path, Key: "config_text", Msg: msg + ": run.json was edited; it must hold the config the run started with"}
	}
	return &man, nil
}

// outputNames are the files and folders a run writes into its folder; a
// rerun with Force removes them first.
var outputNames = []string{ManifestFile, CheckpointFile, "series.csv", "samples.csv", "summary.json",
	"final.vti", "final.npy", "phases.csv", "timelapse.gif", "report.html", "slices", "plots"}

// holdsRun reports whether dir holds any output of a run.
func holdsRun(dir string) bool {
	for _, n := range outputNames {
		if _, err := os.Lstat(filepath.Join(dir, n)); err == nil {
			return true
		}
	}
	return false
}

// prepareOut checks the output folder of a new run: it must not be a
// file, and a folder holding another run's outputs is refused unless
// force, in which case those outputs are removed (nothing else in the
// folder is touched).
func prepareOut(dir string, force bool) error {
	if st, err := os.Stat(dir); err == nil && !st.IsDir() {
		return &configs.InputError{File: dir, Msg: "exists and is not a folder"}
	}
	if !holdsRun(dir) {
		return nil
	}
	if !force {
		if m, err := ReadManifest(dir); err == nil && !m.Complete {
			return &configs.InputError{File: dir, Msg: "folder holds an unfinished run (run.json: complete false); continue it with --resume " + dir + ", or replace it with --force"}
		}
		return &configs.InputError{File: dir, Msg: "folder holds another run; use --force to replace it, or --resume to continue it"}
	}
	for _, n := range outputNames {
		if err := os.RemoveAll(filepath.Join(dir, n)); err != nil {
			return err
		}
	}
	return removeTemps(dir)
}

// removeTemps removes the temporary files that an interrupted write left
// in dir, slices/ and plots/.
func removeTemps(dir string) error {
	for _, d := range []string{dir, filepath.Join(dir, "slices"), filepath.Join(dir, "plots")} {
		matches, _ := filepath.Glob(filepath.Join(d, ".*.tmp-*"))
		for _, m := range matches {
			if err := os.Remove(m); err != nil && !errors.Is(err, fs.ErrNotExist) {
				return err
			}
		}
	}
	return nil
}

// checkPackMix refuses a pack (gelspace pack's folder) made for another
// mix than cfg's: w/c, phase mass fractions, PSD and box must agree.
func checkPackMix(dir string, m *Mix) error {
	path := filepath.Join(dir, "pack.json")
	data, err := configs.ReadInput(path, "pack report")
	if err != nil {
		return err
	}
	var rep PackReport
	if err := json.Unmarshal(data, &rep); err != nil {
		return &configs.InputError{File: path, Msg: "malformed pack report: " + err.Error()}
	}
	want := m.Report()
	differ := func(what string, got, cfg any) error {
		return &configs.InputError{File: path, Key: what, Msg: fmt.Sprintf("the pack was made with %v, the config has %v: use the config the pack was made with", got, cfg)}
	}
	near := func(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }
	if !near(rep.Mix.WC, want.WC) {
		return differ("mix.w_c", rep.Mix.WC, want.WC)
	}
	if len(rep.Mix.Phases) != len(want.Phases) {
		return differ("cement", fmt.Sprintf("%d phases", len(rep.Mix.Phases)), fmt.Sprintf("%d", len(want.Phases)))
	}
	for i, p := range want.Phases {
		q := rep.Mix.Phases[i]
		if q.Key != p.Key || !near(q.MassPercent, p.MassPercent) {
			return differ("cement."+p.Key, fmt.Sprintf("%s %.4g %%", q.Key, q.MassPercent), fmt.Sprintf("%s %.4g %%", p.Key, p.MassPercent))
		}
	}
	if rep.Mix.PSD.Description != want.PSD.Description || !near(rep.Mix.PSD.D50UM, want.PSD.D50UM) {
		return differ("psd", configs.Snippet(rep.Mix.PSD.Description), want.PSD.Description)
	}
	if rep.Seed != m.Cfg.Seed {
		return differ("seed", rep.Seed, m.Cfg.Seed)
	}
	return nil
}

// readResumeState opens dir's checkpoint for a run of cfg: the engine and
// the progress record. It returns ok = false when there is no checkpoint
// (the run stopped before its first one).
func readResumeState(dir string, cfg *configs.Config, man *Manifest, set voxel.EngineSettings) (e *voxel.Engine, state []byte, ok bool, err error) {
	path := filepath.Join(dir, CheckpointFile)
	f, err := os.Open(path)
	if errors.Is(err, fs.ErrNotExist) {
		return nil, nil, false, nil
	}
	if err != nil {
		return nil, nil, false, &configs.InputError{File: path, Msg: err.Error()}
	}
	defer f.Close()
	if st, err := f.Stat(); err != nil || !st.Mode().IsRegular() {
		return nil, nil, false, &configs.InputError{File: path, Msg: "not a regular file"}
	}
	e, extra, err := voxel.ReadCheckpoint(f, set)
	if err != nil {
		return nil, nil, false, &configs.InputError{File: path, Msg: err.Error()}
	}
	state, err = unwrapState(extra, identity(cfg, man))
	if err != nil {
		return nil, nil, false, &configs.InputError{File: path, Msg: err.Error()}
	}
	g := e.Grid()
	if n := cfg.Box.Voxels; g.NX != n || g.NY != n || g.NZ != n {
		return nil, nil, false, &configs.InputError{File: path, Msg: "the saved lattice does not match the run's box: the checkpoint belongs to another run"}
	}
	return e, state, true, nil
}
