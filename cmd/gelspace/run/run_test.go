package run

import (
	"errors"
	"os"
	"path/filepath"
	"testing"

	"gelspace/configs"
)

// smallConfig is the embedded default on a 20³ box to 12 h, without D/D0.
func smallConfig(t *testing.T) *configs.Config {
	t.Helper()
	cfg, err := configs.Load("", []string{"box.voxels=20", "curing.until_h=12", "output.times_h=[4, 12]", "output.diffusivity=false"})
	if err != nil {
		t.Fatal(err)
	}
	return cfg
}

// Run reports its progress through Options.Progress, at increasing ages up
// to curing.until_h, and its Result matches the last row it wrote.
func TestRunProgressAndResult(t *testing.T) {
	cfg := smallConfig(t)
	var ages []float64
	dir := t.TempDir()
	res, err := Run(cfg, Options{Out: dir, Progress: func(p Progress) {
		if p.UntilH != 12 || !(p.Alpha >= 0 && p.Alpha < 1) {
			t.Errorf("progress %+v", p)
		}
		ages = append(ages, p.TimeH)
	}})
	if err != nil {
		t.Fatal(err)
	}
	// sample_every_h = 0.25: 48 sample ages to 12 h.
	if len(ages) != 48 || ages[len(ages)-1] != 12 {
		t.Fatalf("%d progress calls, last at %v h; want 48, the last at 12 h", len(ages), ages[len(ages)-1])
	}
	for i := 1; i < len(ages); i++ {
		if !(ages[i] > ages[i-1]) {
			t.Fatalf("progress ages not increasing: %v", ages)
		}
	}
	if res.TimeH != 12 || !(res.Alpha > 0) || !(res.HeatJPerG > 0) || !(res.CapillaryPorosity > 0 && res.CapillaryPorosity < 1) {
		t.Errorf("result %+v", res)
	}
	for _, f := range []string{"series.csv", "samples.csv", "summary.json", "final.vti", "final.npy", "phases.csv", ManifestFile} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("%s not written: %v", f, err)
		}
	}
	if _, err := os.Stat(filepath.Join(dir, "report.html")); err == nil {
		t.Error("report.html written without Options.Images")
	}
}

// Run needs an output folder, and a resume needs a checkpoint: the second
// is bad input.
func TestRunRefuses(t *testing.T) {
	cfg := smallConfig(t)
	if _, err := Run(cfg, Options{}); err == nil {
		t.Error("Run without Options.Out succeeded")
	}
	_, err := Run(cfg, Options{Out: t.TempDir(), Resume: true})
	var ie *configs.InputError
	if !errors.As(err, &ie) {
		t.Errorf("resume without a checkpoint: %v, want an InputError", err)
	}
}

// TestMemoryNeedCoversMeasured checks the resident estimate against the
// peaks measured on the 2-core development machine (GNU time's maximum
// resident set size of `gelspace run --size N --until 168`, README,
// Performance): it must not fall below a measured peak, which would let
// a box through that does not fit, nor exceed it by more than 6 %, which
// would refuse boxes that do.
func TestMemoryNeedCoversMeasured(t *testing.T) {
	for _, m := range []struct {
		n    int
		diff bool
		kib  float64
	}{
		{100, true, 81752}, {100, false, 80128},
		{160, true, 205644}, {160, false, 205652},
		{200, true, 365332},
		{300, true, 1159600},
	} {
		got, peak := MemoryNeed(m.n, m.diff), m.kib*1024
		if got < peak || got > 1.06*peak {
			t.Errorf("%d³, D/D0 %v: estimate %.1f MB, measured peak %.1f MB (want 1 to 1.06 times it)", m.n, m.diff, got/1e6, peak/1e6)
		}
		if lim := HeapLimit(m.n, m.diff); lim >= got {
			t.Errorf("%d³: heap limit %.1f MB not below the resident estimate %.1f MB", m.n, lim/1e6, got/1e6)
		}
	}
}
