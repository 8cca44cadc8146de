package main

import (
	"bytes"
	"crypto/sha256"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"io/fs"
	"math/rand/v2"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"unicode"

	"gelspace/cmd/gelspace/fit"
	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
)

// hostileBase is the small config the hostile cases start from: 24³
// voxels to 24 h. Its lines: 1 seed, 3 phases, 5 rosin_rammler, 7 w_c,
// 9 voxels, 11 until_h, 13 times_h.
const hostileBase = `seed = 3
[cement]
phases = { c3s = 58.0, c2s = 17.0, c3a = 7.5, c4af = 10.5, gypsum = 5.0, calcite = 2.0 }
[psd]
rosin_rammler = { x_um = 6.0, n = 1.1 }
[mix]
w_c = 0.45
[box]
voxels = 24
[curing]
until_h = 24.0
[output]
times_h = [4, 8, 24]
`

// hostileSweep is a two-point sweep of hostileBase (base.toml beside it).
const hostileSweep = `name = "hostile"
base = "base.toml"
replicates = 1
[set]
"curing.until_h" = 8.0
"output.times_h" = [4, 8]
[axes]
"mix.w_c" = [0.4, 0.5]
`

// hostileFixtures builds, once per test binary run, the folders the
// hostile cases start from: a pack, a complete run, two runs stopped
// after their first checkpoint (seeds 3 and 5), a finished sweep and the
// test volumes. Cases copy what they need into their own folder.
func hostileFixtures(t *testing.T) string {
	t.Helper()
	f := t.TempDir()
	write := func(name, text string) {
		if err := os.WriteFile(filepath.Join(f, name), []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	write("base.toml", hostileBase)
	write("sweep.toml", hostileSweep)
	base := filepath.Join(f, "base.toml")
	mainOK(t, "pack", base, "--out", filepath.Join(f, "pack"), "-q")
	mainOK(t, "run", base, "--out", filepath.Join(f, "done"), "--no-render", "-q")
	for _, seed := range []string{"3", "5"} {
		afterCheckpoint = func() error { return errKilled }
		var stderr bytes.Buffer
		code := Main([]string{"run", base, "--out", filepath.Join(f, "stop"+seed), "--seed", seed, "--no-render", "-q", "--checkpoint-every", "4h"}, io.Discard, &stderr)
		afterCheckpoint = nil
		if code == 0 || !strings.Contains(stderr.String(), errKilled.Error()) {
			t.Fatalf("stopping the seed %s run: exit %d, %s", seed, code, stderr.String())
		}
	}
	mainOK(t, "sweep", filepath.Join(f, "sweep.toml"), "--out", filepath.Join(f, "sweep"), "-q", "--jobs", "1")
	vols := filepath.Join("..", "..", "testdata", "volumes")
	for _, v := range []string{"gelspace-12.vti", "gelspace-12.npy", "vtk-ascii.vti"} {
		copyTree(t, filepath.Join(vols, v), filepath.Join(f, v))
	}
	copyTree(t, filepath.Join("..", "..", "testdata", "fit", "rw-g-heat-20c.csv"), filepath.Join(f, "heat.csv"))
	copyTree(t, filepath.Join("..", "..", "testdata", "psd", "rw-g-laser.csv"), filepath.Join(f, "psd.csv"))
	return f
}

// copyTree copies a file or a folder.
func copyTree(t *testing.T, src, dst string) {
	t.Helper()
	err := filepath.WalkDir(src, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(src, p)
		to := filepath.Join(dst, rel)
		if d.IsDir() {
			return os.MkdirAll(to, 0o755)
		}
		data, err := os.ReadFile(p)
		if err != nil {
			return err
		}
		return os.WriteFile(to, data, 0o644)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// snapshot records every file and folder under dir: its kind, size and
// content hash.
func snapshot(t *testing.T, dir string) map[string]string {
	t.Helper()
	out := map[string]string{}
	filepath.WalkDir(dir, func(p string, d fs.DirEntry, err error) error {
		if err != nil {
			return err
		}
		rel, _ := filepath.Rel(dir, p)
		if d.IsDir() {
			out[rel] = "dir"
			return nil
		}
		st, err := os.Lstat(p)
		if err != nil {
			return err
		}
		if !st.Mode().IsRegular() {
			out[rel] = st.Mode().String()
			return nil
		}
		// Large sparse inputs are recorded by size only.
		if st.Size() > 1<<20 {
			out[rel] = fmt.Sprintf("%d bytes", st.Size())
			return nil
		}
		data, _ := os.ReadFile(p)
		out[rel] = fmt.Sprintf("%d bytes %x", len(data), sha256.Sum256(data))
		return nil
	})
	return out
}

// diffSnapshots lists what changed between two snapshots.
func diffSnapshots(a, b map[string]string) []string {
	var d []string
	for k, v := range a {
		if w, ok := b[k]; !ok {
			d = append(d, "removed "+k)
		} else if w != v {
			d = append(d, "changed "+k)
		}
	}
	for k := range b {
		if _, ok := a[k]; !ok {
			d = append(d, "created "+k)
		}
	}
	sort.Strings(d)
	return d
}

// hostileCase is one hostile input: setup fills the case's folder d
// (copying fixtures from f), args ({d} and {f} replaced) are given to
// Main, which must exit with code (2 unless said) and print one line
// holding every want, and leave d exactly as setup made it.
type hostileCase struct {
	name  string
	setup func(h *hostileEnv)
	args  []string
	code  int
	want  []string
}

// hostileEnv is a case's folder and the fixtures.
type hostileEnv struct {
	t    *testing.T
	d, f string
}

func (h *hostileEnv) write(name, text string) {
	p := filepath.Join(h.d, name)
	os.MkdirAll(filepath.Dir(p), 0o755)
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		h.t.Fatal(err)
	}
}

func (h *hostileEnv) copy(names ...string) {
	for _, n := range names {
		copyTree(h.t, filepath.Join(h.f, n), filepath.Join(h.d, n))
	}
}

// config writes cfg.toml: hostileBase with each old → new edit.
func (h *hostileEnv) config(edits ...string) {
	text := hostileBase
	for i := 0; i+1 < len(edits); i += 2 {
		if !strings.Contains(text, edits[i]) {
			h.t.Fatalf("edit %q not in the base config", edits[i])
		}
		text = strings.Replace(text, edits[i], edits[i+1], 1)
	}
	h.write("cfg.toml", text)
}

// sparse makes a file of n zero bytes without writing them.
func (h *hostileEnv) sparse(name string, n int64) {
	f, err := os.Create(filepath.Join(h.d, name))
	if err != nil {
		h.t.Fatal(err)
	}
	f.Truncate(n)
	f.Close()
}

// binary writes n pseudo-random bytes (a fixed seed).
func (h *hostileEnv) binary(name string, n int) {
	r := rand.New(rand.NewPCG(1, uint64(n)))
	b := make([]byte, n)
	for i := range b {
		b[i] = byte(r.Uint32())
	}
	h.write(name, string(b))
}

// editManifest rewrites run.json of the run folder dir with edit.
func (h *hostileEnv) editManifest(dir string, edit func(m map[string]any)) {
	p := filepath.Join(h.d, dir, run.ManifestFile)
	data, err := os.ReadFile(p)
	if err != nil {
		h.t.Fatal(err)
	}
	var m map[string]any
	if err := json.Unmarshal(data, &m); err != nil {
		h.t.Fatal(err)
	}
	edit(m)
	data, _ = json.Marshal(m)
	h.write(filepath.Join(dir, run.ManifestFile), string(data))
}

// npyHeader is an .npy file header for a uint8 array of shape (z, y, x).
func npyHeader(z, y, x int) string {
	dict := fmt.Sprintf("{'descr': '|u1', 'fortran_order': False, 'shape': (%d, %d, %d), }", z, y, x)
	pad := (64 - (10+len(dict)+1)%64) % 64
	dict += strings.Repeat(" ", pad) + "\n"
	var l [2]byte
	binary.LittleEndian.PutUint16(l[:], uint16(len(dict)))
	return "\x93NUMPY\x01\x00" + string(l[:]) + dict
}

var (
	onlyCfg  = func(h *hostileEnv) { h.config() }
	schedule = func(rows string) func(h *hostileEnv) { return scheduleCfg("time_h,temperature_c\n" + rows) }
	fitCurve = func(text string) func(h *hostileEnv) {
		return func(h *hostileEnv) { h.config(); h.write("m.csv", text) }
	}
	psdConfig = func(table string) func(h *hostileEnv) {
		return func(h *hostileEnv) {
			h.write("t.csv", table)
			h.config("rosin_rammler = { x_um = 6.0, n = 1.1 }", `table = "t.csv"`)
		}
	}
	sweepFile = func(text string) func(h *hostileEnv) {
		return func(h *hostileEnv) { h.copy("base.toml"); h.write("s.toml", text) }
	}
)

func scheduleCfg(csv string) func(h *hostileEnv) {
	return func(h *hostileEnv) {
		h.write("sched.csv", csv)
		h.config("until_h = 24.0", "until_h = 24.0\ntemperature_mode = \"schedule\"\nschedule = \"sched.csv\"")
	}
}

const sweepHead = "name = \"x\"\nbase = \"base.toml\"\n"

var hostileCases = []hostileCase{
	// run: numbers in the config, the --set tree and the schedule
	{name: "run: NaN temperature in the schedule, into an existing run with --force", setup: func(h *hostileEnv) {
		h.copy("done")
		scheduleCfg("time_h,temperature_c\n0,20\n5,nan\n10,30\n")(h)
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/done", "--force", "-q"}, want: []string{"cfg.toml:13", "curing.schedule", "sched.csv", "line 3", "finite"}},
	{name: "run: NaN time in the schedule", setup: schedule("0,20\nnan,25\n10,30\n"), args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"curing.schedule", "line 3", "finite"}},
	{name: "run: schedule time 1e300", setup: schedule("0,20\n1e300,25\n"), args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"curing.schedule", "line 3", "time_h", "≤ 100000"}},
	{name: "run: schedule at 200 °C", setup: schedule("0,20\n5,200\n"), args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"curing.schedule", "line 3", "between -10 and 95"}},
	{name: "run: schedule of /dev/zero", setup: func(h *hostileEnv) {
		h.config("until_h = 24.0", "until_h = 24.0\ntemperature_mode = \"schedule\"\nschedule = \"/dev/zero\"")
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"curing.schedule", "/dev/zero", "not a regular file"}},
	{name: "run: 64 MB schedule", setup: func(h *hostileEnv) {
		h.sparse("sched.csv", 64<<20)
		h.config("until_h = 24.0", "until_h = 24.0\ntemperature_mode = \"schedule\"\nschedule = \"sched.csv\"")
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"sched.csv", "larger than the 8388608"}},
	{name: "run: infinite dissolution scale by --set", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.dissolution_scale=inf"}, want: []string{"--set kinetics.dissolution_scale=inf", "kinetics.dissolution_scale", "finite"}},
	{name: "run: dissolution scale 1e300", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.dissolution_scale=1e300"}, want: []string{"--set", "kinetics.dissolution_scale", "≤ 1000"}},
	{name: "run: vanishing silicate saturation", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.silicate_saturation=1e-300"}, want: []string{"--set", "kinetics.silicate_saturation", "≥ 0.0001"}},
	{name: "run: vanishing CH saturation in the file", setup: func(h *hostileEnv) {
		h.config("[output]", "[kinetics]\nch_saturation = 1e-300\n[output]")
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"cfg.toml:13", "kinetics.ch_saturation", "≥ 0.0001"}},
	{name: "run: attempt rate 1e300", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.attempt_per_h=1e300"}, want: []string{"kinetics.attempt_per_h", "≤ 10000"}},
	{name: "run: C3S velocity 1e300", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.c3s.velocity_um_per_h=1e300"}, want: []string{"kinetics.phase.c3s.velocity_um_per_h", "≤ 1000"}},
	{name: "run: NaN activation energy in the file", setup: func(h *hostileEnv) {
		h.config("[output]", "[kinetics.phase.c3s]\nea_kj_per_mol = nan\n[output]")
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"cfg.toml:13", "kinetics.phase.c3s.ea_kj_per_mol", "finite"}},
	{name: "run: NaN through-product factor", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.c2s.through_product=nan"}, want: []string{"--set", "kinetics.phase.c2s.through_product", "finite"}},
	{name: "run: through-product factor 2 refused, not capped", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.c3s.through_product=2"}, want: []string{"--set kinetics.phase.c3s.through_product=2", "≥ 0 and ≤ 1"}},
	{name: "run: NaN sulfate factor", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.c3a.sulfate_factor=nan"}, want: []string{"kinetics.phase.c3a.sulfate_factor", "finite"}},
	{name: "run: NaN product length", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.product_length_um=nan"}, want: []string{"kinetics.product_length_um", "finite"}},
	{name: "run: sulfate Hill exponent 1e300", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.sulfate_hill=1e300"}, want: []string{"kinetics.sulfate_hill", "≤ 20"}},
	{name: "run: densification length 1e-300 K", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.product_densify_k=1e-300"}, want: []string{"kinetics.product_densify_k", "0 (off) or between 1 and 1000"}},
	{name: "run: unknown kinetics phase blames --set", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.xyz.velocity_um_per_h=1"}, want: []string{"--set kinetics.phase.xyz.velocity_um_per_h=1", "kinetics.phase.xyz", "c3s"}},
	{name: "run: unknown kinetics phase key lists the phase keys", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "kinetics.phase.c3s.velocity=1"}, want: []string{"kinetics.phase.c3s.velocity", "unknown key", "velocity_um_per_h"}},
	{name: "run: NaN w/c", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "mix.w_c=nan"}, want: []string{"mix.w_c", "finite"}},
	{name: "run: NaN output age", setup: func(h *hostileEnv) { h.config("times_h = [4, 8, 24]", "times_h = [4, nan, 24]") }, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"cfg.toml:13", "output.times_h", "finite"}},
	{name: "run: 10^7 samples (until 100000 h every 0.01 h) refused, not allocated", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "curing.until_h=100000", "--set", "output.sample_every_h=0.01"},
		want: []string{"output.sample_every_h", "10000000 samples", "at most 200000", "0.5 h"}},
	{name: "run: infinite until_h by --set", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "curing.until_h=inf"}, want: []string{"curing.until_h", "finite"}},
	{name: "run: --until Inf", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--until", "Inf"}, want: []string{"--until", "> 0 and ≤ 100000"}},
	{name: "run: --until -1", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--until", "-1"}, want: []string{"--until", "> 0"}},
	{name: "run: --size 2000", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--size", "2000"}, want: []string{"--size 2000", "between 10 and 1000"}},
	{name: "run: --size 1000 quotes the run's memory", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--size", "1000"}, want: []string{"--size", "a run of 1000³ voxels needs about", "at most"}},
	{name: "run: --seed -1", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--seed", "-1"}, want: []string{"--seed", "≥ 0"}},
	{name: "run: --checkpoint-every 0h", setup: onlyCfg, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--checkpoint-every", "0h"}, want: []string{"--checkpoint-every", "> 0"}},
	{name: "run: config is /dev/zero", args: []string{"run", "/dev/zero", "--out", "{d}/out", "-q"}, want: []string{"/dev/zero", "config", "not a regular file"}},
	{name: "run: 64 MB config", setup: func(h *hostileEnv) { h.sparse("big.toml", 64<<20) }, args: []string{"run", "{d}/big.toml", "--out", "{d}/out", "-q"}, want: []string{"big.toml", "larger than the 8388608"}},
	{name: "run: binary config", setup: func(h *hostileEnv) { h.binary("bin.toml", 4096) }, args: []string{"run", "{d}/bin.toml", "--out", "{d}/out", "-q"}, want: []string{"bin.toml", "not a text file"}},
	{name: "run: config is a folder", setup: func(h *hostileEnv) { os.MkdirAll(filepath.Join(h.d, "c.toml"), 0o755) }, args: []string{"run", "{d}/c.toml", "--out", "{d}/out", "-q"}, want: []string{"c.toml", "a folder, not a file"}},
	{name: "run: PSD table of /dev/zero", setup: func(h *hostileEnv) {
		h.config("rosin_rammler = { x_um = 6.0, n = 1.1 }", `table = "/dev/zero"`)
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"cfg.toml:5", "psd.table", "not a regular file"}},
	{name: "run: 64 MB PSD table", setup: func(h *hostileEnv) {
		h.sparse("t.csv", 64<<20)
		h.config("rosin_rammler = { x_um = 6.0, n = 1.1 }", `table = "t.csv"`)
	}, args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"psd.table", "larger than the 8388608"}},
	{name: "run: PSD table with a NaN size", setup: psdConfig("size_um,passing_percent\n1,5\nnan,50\n40,100\n"), args: []string{"run", "{d}/cfg.toml", "--out", "{d}/out", "-q"}, want: []string{"psd.table", "t.csv"}},
	// run: folders, packs, checkpoints and manifests
	{name: "run: --from a w/c 0.45 pack with mix.w_c=0.6", setup: func(h *hostileEnv) { h.copy("pack"); h.config() },
		args: []string{"run", "{d}/cfg.toml", "--from", "{d}/pack", "--set", "mix.w_c=0.6", "--out", "{d}/out", "-q"}, want: []string{"pack.json", "mix.w_c", "0.45", "0.6"}},
	{name: "run: --from a pack of another seed", setup: func(h *hostileEnv) { h.copy("pack"); h.config() },
		args: []string{"run", "{d}/cfg.toml", "--from", "{d}/pack", "--seed", "9", "--out", "{d}/out", "-q"}, want: []string{"pack.json", "seed"}},
	{name: "run: --from a folder without a pack", setup: func(h *hostileEnv) { h.config(); os.MkdirAll(filepath.Join(h.d, "empty"), 0o755) },
		args: []string{"run", "{d}/cfg.toml", "--from", "{d}/empty", "--out", "{d}/out", "-q"}, want: []string{"pack.vti", "no such file"}},
	{name: "run: rerun into a complete run folder without --force", setup: func(h *hostileEnv) { h.copy("done"); h.config() },
		args: []string{"run", "{d}/cfg.toml", "--out", "{d}/done", "--no-render", "-q"}, want: []string{"done", "--force"}},
	{name: "run: new run into an unfinished run folder", setup: func(h *hostileEnv) { h.copy("stop3"); h.config() },
		args: []string{"run", "{d}/cfg.toml", "--out", "{d}/stop3", "-q"}, want: []string{"stop3", "unfinished", "--resume"}},
	{name: "run: --out is a file", setup: func(h *hostileEnv) { h.config(); h.write("file", "x") },
		args: []string{"run", "{d}/cfg.toml", "--out", "{d}/file", "-q"}, want: []string{"--out", "not a folder"}},
	{name: "run: --resume with a checkpoint copied from another run", setup: func(h *hostileEnv) {
		h.copy("stop3")
		copyTree(h.t, filepath.Join(h.f, "stop5", run.CheckpointFile), filepath.Join(h.d, "stop3", run.CheckpointFile))
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"checkpoint.gsck", "refused"}},
	{name: "run: --resume with a hand-edited w/c in run.json", setup: func(h *hostileEnv) {
		h.copy("stop3")
		h.editManifest("stop3", func(m map[string]any) {
			m["config_text"] = strings.Replace(m["config_text"].(string), "w_c = 0.45", "w_c = 0.55", 1)
		})
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"checkpoint.gsck", "run.json was edited"}},
	{name: "run: --resume with added overrides in run.json", setup: func(h *hostileEnv) {
		h.copy("stop3")
		h.editManifest("stop3", func(m map[string]any) { m["sets"] = []string{"kinetics.dissolution_scale=2"} })
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"checkpoint.gsck", "refused"}},
	{name: "run: --resume with malformed config text in run.json", setup: func(h *hostileEnv) {
		h.copy("stop3")
		h.editManifest("stop3", func(m map[string]any) { m["config_text"] = "garbage [[[" })
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"run.json", "config_text", "malformed TOML"}},
	{name: "run: --resume with an unknown field in run.json", setup: func(h *hostileEnv) {
		h.copy("stop3")
		h.editManifest("stop3", func(m map[string]any) { m["hack"] = 1 })
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"run.json", "malformed run manifest"}},
	{name: "run: --resume with a binary run.json", setup: func(h *hostileEnv) {
		h.copy("stop3")
		h.binary(filepath.Join("stop3", run.ManifestFile), 300)
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"run.json", "not a text file"}},
	{name: "run: --resume DIR --out OTHER", setup: func(h *hostileEnv) { h.copy("stop3") }, args: []string{"run", "--resume", "{d}/stop3", "--out", "{d}/other", "-q"}, want: []string{"--resume", "--out"}},
	{name: "run: --resume with --no-render", setup: func(h *hostileEnv) { h.copy("stop3") }, args: []string{"run", "--resume", "{d}/stop3", "--no-render", "-q"}, want: []string{"--resume", "--no-render"}},
	{name: "run: --resume with a config", setup: func(h *hostileEnv) { h.copy("stop3"); h.config() }, args: []string{"run", "{d}/cfg.toml", "--resume", "{d}/stop3", "-q"}, want: []string{"--resume", "CONFIG"}},
	{name: "run: --resume a complete run", setup: func(h *hostileEnv) { h.copy("done") }, args: []string{"run", "--resume", "{d}/done", "-q"}, want: []string{"run.json", "complete"}},
	{name: "run: --resume a truncated checkpoint", setup: func(h *hostileEnv) {
		h.copy("stop3")
		os.Truncate(filepath.Join(h.d, "stop3", run.CheckpointFile), 1000)
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"checkpoint.gsck", "truncated"}},
	{name: "run: --resume a checkpoint whose header claims 32 GiB", setup: func(h *hostileEnv) {
		h.copy("stop3")
		p := filepath.Join(h.d, "stop3", run.CheckpointFile)
		data, _ := os.ReadFile(p)
		head := append(data[:len("gelspace checkpoint\n")+36:len("gelspace checkpoint\n")+36], 0, 0, 0, 8, 0, 0, 0, 0)
		os.WriteFile(p, append(head, make([]byte, 1000)...), 0o644)
	}, args: []string{"run", "--resume", "{d}/stop3", "-q"}, want: []string{"checkpoint.gsck", "truncated", "34359738368", "1000 present"}},
	{name: "run: --resume a folder without run.json", setup: func(h *hostileEnv) { os.MkdirAll(filepath.Join(h.d, "x"), 0o755) },
		args: []string{"run", "--resume", "{d}/x", "-q"}, want: []string{"run.json", "run folder"}},

	// mix and pack
	{name: "mix: config is /dev/zero", args: []string{"mix", "/dev/zero"}, want: []string{"/dev/zero", "not a regular file"}},
	{name: "mix: NaN phase mass", setup: onlyCfg, args: []string{"mix", "{d}/cfg.toml", "--set", "cement.phases.c3s=nan"}, want: []string{"--set", "cement.phases.c3s", "finite"}},
	{name: "mix: garbage PSD header prints no binary bytes", setup: psdConfig("\x01\x02garbage\x1b[31m,header" + strings.Repeat("A", 300) + "\n1,5\n40,100\n"),
		args: []string{"mix", "{d}/cfg.toml"}, want: []string{"psd.table", "t.csv", "not a text file"}},
	{name: "mix: long PSD header quoted short", setup: psdConfig("size\u202e" + strings.Repeat("B", 300) + ",passing\n1,5\n40,100\n"),
		args: []string{"mix", "{d}/cfg.toml"}, want: []string{"psd.table", "header", `\u202e`, "…", "size_um and passing_percent"}},
	{name: "mix: --size 5", setup: onlyCfg, args: []string{"mix", "{d}/cfg.toml", "--size", "5"}, want: []string{"--size 5", "between 10 and 1000"}},
	{name: "pack: --out is a file", setup: func(h *hostileEnv) { h.config(); h.write("file", "x") }, args: []string{"pack", "{d}/cfg.toml", "--out", "{d}/file", "-q"}, want: []string{"--out", "not a folder"}},
	{name: "pack: --size 2000", setup: onlyCfg, args: []string{"pack", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--size", "2000"}, want: []string{"--size 2000", "between 10 and 1000"}},
	{name: "pack: NaN voxel size", setup: onlyCfg, args: []string{"pack", "{d}/cfg.toml", "--out", "{d}/out", "-q", "--set", "box.voxel_um=nan"}, want: []string{"box.voxel_um", "finite"}},
	{name: "pack: 64 MB config", setup: func(h *hostileEnv) { h.sparse("big.toml", 64<<20) }, args: []string{"pack", "{d}/big.toml", "--out", "{d}/out", "-q"}, want: []string{"big.toml", "larger than"}},

	// analyze and render
	{name: "analyze: /dev/zero", args: []string{"analyze", "/dev/zero"}, want: []string{"/dev/zero", "not a regular file"}},
	{name: "analyze: missing file named once", args: []string{"analyze", "{d}/none.vti"}, want: []string{"none.vti: cannot read volume: no such file"}},
	{name: "analyze: 64 MB binary .vti refused from its head", setup: func(h *hostileEnv) { h.sparse("big.vti", 64<<20) }, args: []string{"analyze", "{d}/big.vti"}, want: []string{"big.vti", "no ImageData"}},
	{name: "analyze: 64 MB binary .npy", setup: func(h *hostileEnv) { h.sparse("big.npy", 64<<20) }, args: []string{"analyze", "{d}/big.npy"}, want: []string{"big.npy", "not a NumPy file"}},
	{name: "analyze: random bytes as .vti", setup: func(h *hostileEnv) { h.binary("r.vti", 100000) }, args: []string{"analyze", "{d}/r.vti"}, want: []string{"r.vti", "cannot read volume"}},
	{name: "analyze: truncated .npy counts the values", setup: func(h *hostileEnv) {
		data, _ := os.ReadFile(filepath.Join(h.f, "gelspace-12.npy"))
		h.write("short.npy", string(data[:1000]))
	}, args: []string{"analyze", "{d}/short.npy"}, want: []string{"short.npy", "872 of the 1728 values"}},
	{name: "analyze: ASCII .vti value 300", setup: func(h *hostileEnv) { asciiVTI(h, "300") }, args: []string{"analyze", "{d}/a.vti"}, want: []string{"a.vti", "300", "UInt8"}},
	{name: "analyze: ASCII .vti value -1", setup: func(h *hostileEnv) { asciiVTI(h, "-1") }, args: []string{"analyze", "{d}/a.vti"}, want: []string{"a.vti", "-1", "UInt8"}},
	{name: "analyze: Int32 .vti value 300", setup: func(h *hostileEnv) { asciiVTIType(h, "Int32", "300") }, args: []string{"analyze", "{d}/a.vti"}, want: []string{"a.vti", "phase 300", "between 0 and 255"}},
	{name: "analyze: a volume too large for memory, from its header", setup: func(h *hostileEnv) {
		h.write("huge.npy", npyHeader(1024, 1024, 1024))
		os.Truncate(filepath.Join(h.d, "huge.npy"), 1<<30+128)
	}, args: []string{"analyze", "{d}/huge.npy"}, want: []string{"huge.npy", "1024×1024×1024", "needs about", "GB"}},
	{name: "analyze: .npy shape of four axes", setup: func(h *hostileEnv) {
		dict := "{'descr': '|u1', 'fortran_order': False, 'shape': (2, 2, 2, 2), }\n"
		h.write("s4.npy", "\x93NUMPY\x01\x00"+string([]byte{byte(len(dict)), 0})+dict+strings.Repeat("\x01", 16))
	}, args: []string{"analyze", "{d}/s4.npy"}, want: []string{"s4.npy", "3D"}},
	{name: "analyze: unknown volume type", setup: func(h *hostileEnv) { h.write("v.raw", "x") }, args: []string{"analyze", "{d}/v.raw"}, want: []string{"v.raw", ".vti or .npy"}},
	{name: "analyze: bad --map", setup: func(h *hostileEnv) { h.copy("gelspace-12.npy") }, args: []string{"analyze", "{d}/gelspace-12.npy", "--map", "0=pore,x"}, want: []string{"analyze: --map", "0–255"}},
	{name: "analyze: --tol 2", setup: func(h *hostileEnv) { h.copy("gelspace-12.npy") }, args: []string{"analyze", "{d}/gelspace-12.npy", "--tol", "2"}, want: []string{"--tol", "< 1"}},
	{name: "analyze: --periodic maybe", setup: func(h *hostileEnv) { h.copy("gelspace-12.npy") }, args: []string{"analyze", "{d}/gelspace-12.npy", "--periodic", "maybe"}, want: []string{"--periodic", "true, false or auto"}},
	{name: "render: --out is a file", setup: func(h *hostileEnv) { h.copy("gelspace-12.vti"); h.write("file", "x") }, args: []string{"render", "{d}/gelspace-12.vti", "--out", "{d}/file"}, want: []string{"render: --out", "not a folder"}},
	{name: "render: slice position outside makes no folder", setup: func(h *hostileEnv) { h.copy("gelspace-12.vti") }, args: []string{"render", "{d}/gelspace-12.vti", "--out", "{d}/out", "--z", "99"}, want: []string{"--z 99", "between 0 and 11"}},
	{name: "render: /dev/zero", args: []string{"render", "/dev/zero", "--out", "{d}/out"}, want: []string{"/dev/zero", "not a regular file"}},
	{name: "render: bad --map names render", setup: func(h *hostileEnv) { h.copy("gelspace-12.vti") }, args: []string{"render", "{d}/gelspace-12.vti", "--out", "{d}/out", "--map", "0=lava"}, want: []string{"render: --map", "pore, solid, csh"}},
	{name: "render: 64 MB binary .npy", setup: func(h *hostileEnv) { h.sparse("big.npy", 64<<20) }, args: []string{"render", "{d}/big.npy", "--out", "{d}/out"}, want: []string{"big.npy", "not a NumPy file"}},

	// sweep
	{name: "sweep: /dev/zero", args: []string{"sweep", "/dev/zero", "--out", "{d}/out"}, want: []string{"/dev/zero", "sweep file", "not a regular file"}},
	{name: "sweep: 64 MB sweep file", setup: func(h *hostileEnv) { h.sparse("s.toml", 64<<20) }, args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml", "larger than"}},
	{name: "sweep: same key in [set] and [axes]", setup: sweepFile(sweepHead + "[set]\n\"mix.w_c\" = 0.4\n[axes]\n\"mix.w_c\" = [0.4, 0.5]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml:4", "mix.w_c", "[axes]", "once"}},
	{name: "sweep: another sweep file into a sweep folder", setup: func(h *hostileEnv) {
		h.copy("sweep", "base.toml")
		h.write("other.toml", strings.Replace(hostileSweep, "[0.4, 0.5]", "[0.45, 0.55]", 1))
	}, args: []string{"sweep", "{d}/other.toml", "--out", "{d}/sweep", "-q"}, want: []string{"sweep", "another sweep file", "--force"}},
	{name: "sweep: range step 0", setup: sweepFile(sweepHead + "[axes]\n\"mix.w_c\" = { from = 0.3, to = 0.5, step = 0 }\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml:4", "step must be > 0"}},
	{name: "sweep: range of 10^11 values", setup: sweepFile(sweepHead + "[axes]\n\"mix.w_c\" = { from = 0.3, to = 0.5, step = 1e-12 }\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml:4", "at most 10000"}},
	{name: "sweep: NaN axis value", setup: sweepFile(sweepHead + "[axes]\n\"mix.w_c\" = [nan]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml:4", "mix.w_c", "finite"}},
	{name: "sweep: 10^9 replicates", setup: sweepFile(sweepHead + "replicates = 1e9\n[axes]\n\"mix.w_c\" = [0.4]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml:3", "replicates", "between 1 and 1000"}},
	{name: "sweep: base config /dev/zero", setup: sweepFile("name = \"x\"\nbase = \"/dev/zero\"\n[axes]\n\"mix.w_c\" = [0.4]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"s.toml", "base", "not a regular file"}},
	{name: "sweep: unknown axis key", setup: sweepFile(sweepHead + "[axes]\n\"mix.wc\" = [0.4, 0.5]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out"}, want: []string{"mix.wc", "unknown key"}},
	{name: "sweep: --out is a file", setup: func(h *hostileEnv) { sweepFile(hostileSweep)(h); h.write("file", "x") }, args: []string{"sweep", "{d}/s.toml", "--out", "{d}/file"}, want: []string{"--out", "not a folder"}},
	{name: "sweep: collect a folder whose plan is /dev/zero", setup: func(h *hostileEnv) {
		os.MkdirAll(filepath.Join(h.d, "x"), 0o755)
		os.Symlink("/dev/zero", filepath.Join(h.d, "x", "sweep.json"))
	}, args: []string{"sweep", "collect", "{d}/x"}, want: []string{"sweep.json", "not a regular file", "sweep folder"}},
	{name: "sweep: collect with a point's summary replaced by /dev/zero", setup: func(h *hostileEnv) {
		h.copy("sweep")
		p := filepath.Join(h.d, "sweep", "points", "p0000_r0", "summary.json")
		os.Remove(p)
		os.Symlink("/dev/zero", p)
	}, args: []string{"sweep", "collect", "{d}/sweep"}, want: []string{"p0000_r0", "summary.json", "not a regular file"}},
	{name: "sweep: plan --out is a file", setup: func(h *hostileEnv) { sweepFile(hostileSweep)(h); h.write("file", "x") }, args: []string{"sweep", "plan", "{d}/s.toml", "--out", "{d}/file"}, want: []string{"--out", "not a folder"}},
	{name: "sweep: boxes too large for memory side by side", setup: sweepFile(sweepHead + "[axes]\n\"box.voxels\" = [900, 1000]\n"), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out", "--jobs", "2"}, want: []string{"--jobs 2", "largest points", "1000³ voxels", "GB"}},
	{name: "sweep: --jobs 0", setup: sweepFile(hostileSweep), args: []string{"sweep", "{d}/s.toml", "--out", "{d}/out", "--jobs", "0"}, want: []string{"--jobs 0", "≥ 1"}},

	// fit
	{name: "fit: /dev/zero", args: []string{"fit", "/dev/zero", "--out", "{d}/out"}, want: []string{"/dev/zero", "measured curve", "not a regular file"}},
	{name: "fit: 64 MB curve", setup: func(h *hostileEnv) { h.sparse("m.csv", 64<<20) }, args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv", "larger than"}},
	{name: "fit: --out is a file, refused before fitting", setup: func(h *hostileEnv) { h.copy("heat.csv"); h.write("file", "x") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/file"}, want: []string{"fit: --out", "not a folder"}},
	{name: "fit: NaN heat", setup: fitCurve("time_h,heat_j_per_g\n1,nan\n2,3\n3,4\n4,5\n5,6\n"), args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv:2", "heat_j_per_g", "numbers"}},
	{name: "fit: heat 1e300", setup: fitCurve("time_h,heat_j_per_g\n1,1e300\n2,3\n3,4\n4,5\n5,6\n"), args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv:2", "between 0 and 2000"}},
	{name: "fit: time 1e300", setup: fitCurve("time_h,heat_j_per_g\n1,1\n2,3\n3,4\n4,5\n1e300,6\n"), args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv:6", "time_h", "≤ 100000"}},
	{name: "fit: garbage header quoted short", setup: fitCurve("tim\u202e" + strings.Repeat("B", 300) + ",heat\n1,1\n"), args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv:1", `\u202e`, "…", "time_h"}},
	{name: "fit: binary curve", setup: func(h *hostileEnv) { h.binary("m.csv", 2000) }, args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv", "not a text file"}},
	{name: "fit: too few rows", setup: fitCurve("time_h,heat_j_per_g\n1,1\n2,3\n"), args: []string{"fit", "{d}/m.csv", "--out", "{d}/out"}, want: []string{"m.csv", "2 rows", "at least 5"}},
	{name: "fit: --size 2000", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--size", "2000"}, want: []string{"fit: --size 2000", "between 10 and 1000"}},
	{name: "fit: --size 1000 with 16 seeds quotes the fit's memory", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--size", "1000", "--seeds", "16"}, want: []string{"--size 1000", "--seeds 16", "16 boxes of 1000³ voxels need about", "GB"}},
	{name: "fit: --seeds 0", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--seeds", "0"}, want: []string{"--seeds 0", "between 1 and 16"}},
	{name: "fit: --fix of an unknown multiplier", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--fix", "speed=2"}, want: []string{"--fix", "dissolution_scale"}},
	{name: "fit: --fix NaN", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--fix", "nucleation_scale=nan"}, want: []string{"--fix", "> 0 and ≤ 1000"}},
	{name: "fit: through-product factor 2 by --set", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--out", "{d}/out", "--set", "kinetics.phase.c3s.through_product=2"}, want: []string{"--set kinetics.phase.c3s.through_product=2", "≤ 1"}},
	{name: "fit: config /dev/zero", setup: func(h *hostileEnv) { h.copy("heat.csv") }, args: []string{"fit", "{d}/heat.csv", "--config", "/dev/zero", "--out", "{d}/out"}, want: []string{"/dev/zero", "config", "not a regular file"}},
}

// asciiVTI writes a.vti: the ASCII test volume with its first value
// replaced by v.
func asciiVTI(h *hostileEnv, v string) { asciiVTIType(h, "UInt8", v) }

func asciiVTIType(h *hostileEnv, typ, v string) {
	data, err := os.ReadFile(filepath.Join(h.f, "vtk-ascii.vti"))
	if err != nil {
		h.t.Fatal(err)
	}
	s := strings.Replace(string(data), `type="UInt8" Name="phase"`, `type="`+typ+`" Name="phase"`, 1)
	s = strings.Replace(s, "21 21 21 1 1 1", v+" 21 21 1 1 1", 1)
	h.write("a.vti", s)
}

// TestHostileInputs runs every hostile case: exit status 2 (or the code
// given), one printable line naming the file, key or flag and the
// allowed range, and nothing written or changed.
func TestHostileInputs(t *testing.T) {
	if len(hostileCases) < 60 {
		t.Fatalf("%d hostile cases; the issue asks for at least 60", len(hostileCases))
	}
	commandsSeen := map[string]bool{}
	f := hostileFixtures(t)
	for _, c := range hostileCases {
		commandsSeen[c.args[0]] = true
		t.Run(c.name, func(t *testing.T) {
			h := &hostileEnv{t: t, d: t.TempDir(), f: f}
			if c.setup != nil {
				c.setup(h)
			}
			args := make([]string, len(c.args))
			for i, a := range c.args {
				args[i] = strings.NewReplacer("{d}", h.d, "{f}", f).Replace(a)
			}
			before := snapshot(t, h.d)
			var stdout, stderr bytes.Buffer
			code := Main(args, &stdout, &stderr)
			want := c.code
			if want == 0 {
				want = 2
			}
			msg := stderr.String()
			if code != want {
				t.Fatalf("exit %d, want %d; stderr %q", code, want, msg)
			}
			line := strings.TrimSuffix(msg, "\n")
			if strings.Contains(line, "\n") || !strings.HasPrefix(line, "gelspace: ") {
				t.Errorf("not one gelspace line: %q", msg)
			}
			if len(line) > maxMessage+40 {
				t.Errorf("message of %d bytes, want at most about %d", len(line), maxMessage)
			}
			for _, r := range line {
				if !unicode.IsPrint(r) {
					t.Errorf("message holds the unprintable %U: %q", r, line)
					break
				}
			}
			for _, w := range c.want {
				if !strings.Contains(line, w) {
					t.Errorf("message %q lacks %q", line, w)
				}
			}
			// The path of the file is named once, not twice.
			for _, a := range args {
				if strings.HasPrefix(a, h.d) && strings.Count(line, a+": "+a) > 0 {
					t.Errorf("message repeats %s", a)
				}
			}
			if d := diffSnapshots(before, snapshot(t, h.d)); len(d) > 0 {
				t.Errorf("bad input changed the folder: %v", d)
			}
		})
	}
	for _, c := range commands {
		if !commandsSeen[c.name] {
			t.Errorf("no hostile case for gelspace %s", c.name)
		}
	}
}

// TestAcceptedOddInputs: inputs that look odd but are valid are accepted
// — a fit curve and a config with a UTF-8 byte-order mark, CRLF lines.
func TestAcceptedOddInputs(t *testing.T) {
	f := hostileFixtures(t)
	d := t.TempDir()
	heat, _ := os.ReadFile(filepath.Join(f, "heat.csv"))
	bom := filepath.Join(d, "bom.csv")
	os.WriteFile(bom, append([]byte("\ufeff"), bytes.ReplaceAll(heat, []byte("\n"), []byte("\r\n"))...), 0o644)
	curve, err := readCurveForTest(bom)
	if err != nil {
		t.Fatalf("fit curve with a BOM and CRLF refused: %v", err)
	}
	plain, err := readCurveForTest(filepath.Join(f, "heat.csv"))
	if err != nil {
		t.Fatal(err)
	}
	if curve != plain {
		t.Errorf("the BOM changed the curve: %d vs %d rows", curve, plain)
	}
	cfg := filepath.Join(d, "bom.toml")
	os.WriteFile(cfg, []byte("\ufeff"+strings.ReplaceAll(hostileBase, "\n", "\r\n")), 0o644)
	if _, err := configs.Load(cfg, nil); err != nil {
		t.Errorf("config with a BOM and CRLF refused: %v", err)
	}
	mainOK(t, "mix", cfg)
}

// readCurveForTest reads a measured curve and returns its row count.
func readCurveForTest(p string) (int, error) {
	c, err := fit.ReadMeasured(p)
	if err != nil {
		return 0, err
	}
	return len(c.TimeH), nil
}

// TestForceRerunRemovesStale: a rerun with --force and --no-render into
// the folder of a run with images leaves no image, plot or report of the
// old run behind.
func TestForceRerunRemovesStale(t *testing.T) {
	d := t.TempDir()
	cfg := filepath.Join(d, "cfg.toml")
	os.WriteFile(cfg, []byte(hostileBase), 0o644)
	out := filepath.Join(d, "out")
	mainOK(t, "run", cfg, "--out", out, "-q")
	keep := filepath.Join(out, "notes.txt") // not a gelspace output: kept
	os.WriteFile(keep, []byte("mine"), 0o644)
	for _, f := range []string{"report.html", "timelapse.gif", "slices", "plots"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Fatalf("the run with images lacks %s", f)
		}
	}
	mainOK(t, "run", cfg, "--out", out, "-q", "--no-render", "--force")
	for _, f := range []string{"report.html", "timelapse.gif", "slices", "plots"} {
		if _, err := os.Stat(filepath.Join(out, f)); err == nil {
			t.Errorf("stale %s left by the rerun", f)
		}
	}
	if _, err := os.Stat(keep); err != nil {
		t.Errorf("--force removed a file that is not a gelspace output: %v", err)
	}
}
