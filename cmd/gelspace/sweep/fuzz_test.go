package sweep

import (
	"errors"
	"os"
	"path/filepath"
	"testing"

	"gelspace/configs"
	"gelspace/configs/fuzzmut"
)

// FuzzSweepFile fuzzes the sweep-file parser and, for sweeps of a few
// points, their resolution against a base config. `go test` runs the
// seeds; GELSPACE_LONG=1 runs the body a million times on deterministic
// mutations of them (TestFuzzLong).

func sweepSeeds(t testing.TB) [][]byte {
	out := [][]byte{[]byte(tinySweep), []byte(`name = "n"
base = "base.toml"
[set]
"curing.until_h" = 8.0
"psd.rosin_rammler" = { x_um = 7.0, n = 1.0 }
[axes]
"mix.w_c" = { from = 0.35, to = 0.55, step = 0.1 }
"box.voxels" = { from = 20, to = 24, step = 4 }
`), []byte(`base = "base.toml"
replicates = 3
[zip]
"curing.temperature_c" = [10.0, 20.0, 35.0]
"curing.mode" = ["saturated", "sealed", "sealed"]
`)}
	for _, n := range []string{"wc-grind.toml", "wc-grind-small.toml"} {
		data, err := os.ReadFile(filepath.Join("..", "..", "..", "configs", "sweeps", n))
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, data)
	}
	return out
}

// fuzzSweep: a sweep file is refused with an *InputError, or parses into
// at most maxSweepPoints runs whose axes all have values; sweeps of up
// to 4 runs resolve into configs (or an *InputError) that parse.
func fuzzSweep(t testing.TB, dir string, data []byte) {
	path := filepath.Join(dir, "s.toml")
	s, err := Parse(path, data)
	var ie *configs.InputError
	if err != nil {
		if !errors.As(err, &ie) {
			t.Errorf("parse error of type %T: %v", err, err)
		}
		return
	}
	n := s.NumPoints() * s.Replicates
	if n < 1 || n > maxSweepPoints {
		t.Errorf("accepted a sweep of %d runs", n)
	}
	for _, a := range s.Axes {
		if len(a.Values) == 0 || len(a.Text) != len(a.Values) || len(a.Num) != len(a.Values) {
			t.Errorf("axis %s with %d values, %d texts, %d numbers", a.Key, len(a.Values), len(a.Text), len(a.Num))
		}
	}
	if n > 4 {
		return
	}
	pts, err := s.Points(nil)
	if err != nil {
		if !errors.As(err, &ie) {
			t.Errorf("points error of type %T: %v", err, err)
		}
		return
	}
	if len(pts) != n {
		t.Errorf("%d points for %d runs", len(pts), n)
		return
	}
	if _, err := configs.ParseRaw(pts[0].Name, dir, pts[0].Config); err != nil {
		t.Errorf("point %s: its config.toml does not parse: %v", pts[0].Name, err)
	}
}

func fuzzSweepDir(t testing.TB) string {
	d := t.TempDir()
	if err := os.WriteFile(filepath.Join(d, "base.toml"), []byte(sweepBase), 0o644); err != nil {
		t.Fatal(err)
	}
	return d
}

func FuzzSweepFile(f *testing.F) {
	for _, s := range sweepSeeds(f) {
		f.Add(s)
	}
	dir := fuzzSweepDir(f)
	f.Fuzz(func(t *testing.T, data []byte) { fuzzSweep(t, dir, data) })
}

// TestFuzzLong runs the body on a million mutated inputs (GELSPACE_FUZZ_N
// changes the count); GELSPACE_LONG=1 only.
func TestFuzzLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long: set GELSPACE_LONG=1")
	}
	dir := fuzzSweepDir(t)
	fuzzmut.Run(t, 4, sweepSeeds(t), fuzzmut.Execs(1_000_000), func(data []byte) { fuzzSweep(t, dir, data) })
}
