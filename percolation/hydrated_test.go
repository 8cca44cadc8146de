package percolation

import (
	"bytes"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"
)

// hydratedFile is a 100³ periodic paste at 28 days, written by gelspace run
// as a NumPy uint8 volume of shape (z, y, x) in C order.
var hydratedFile = filepath.Join("..", "testdata", "percolation", "hydrated-100.npy")

// readNPYU8 reads a NumPy 1.0 file of '|u1' in C order with a 3D shape
// (z, y, x) and returns the box (periodic) and the phase bytes.
func readNPYU8(path string) (Box, []uint8, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return Box{}, nil, err
	}
	if len(b) < 10 || !bytes.Equal(b[:6], []byte("\x93NUMPY")) || b[6] != 1 {
		return Box{}, nil, fmt.Errorf("%s: not a NumPy 1.x file", path)
	}
	hl := int(b[8]) | int(b[9])<<8
	if 10+hl > len(b) {
		return Box{}, nil, fmt.Errorf("%s: header length %d past the end", path, hl)
	}
	h := string(b[10 : 10+hl])
	if !strings.Contains(h, "'descr': '|u1'") || !strings.Contains(h, "'fortran_order': False") {
		return Box{}, nil, fmt.Errorf("%s: header %q is not uint8 in C order", path, h)
	}
	var nz, ny, nx int
	k := strings.Index(h, "'shape': (")
	if k < 0 {
		return Box{}, nil, fmt.Errorf("%s: header %q has no shape", path, h)
	}
	if _, err := fmt.Sscanf(h[k+len("'shape': ("):], "%d, %d, %d)", &nz, &ny, &nx); err != nil {
		return Box{}, nil, fmt.Errorf("%s: shape in %q: %v", path, h, err)
	}
	data := b[10+hl:]
	if nx < 1 || ny < 1 || nz < 1 || len(data) != nx*ny*nz {
		return Box{}, nil, fmt.Errorf("%s: shape (%d, %d, %d) does not match %d data bytes", path, nz, ny, nx, len(data))
	}
	return PeriodicBox(nx, ny, nz), data, nil
}

// hydratedRel holds D/D0 per axis of hydratedFile, solved to relative
// residual 1e-10 by the solver of commit 0388786 (aggregation multigrid with
// damped-Jacobi smoothing), before the solver was reworked for speed.
var hydratedRel = [3]float64{0.0104677790275, 0.0112305162595, 0.0100279989936}

// TestDiffusivityHydrated pins D/D0 of the 28-day paste of testdata, solved
// on one worker to relative residual 1e-6 (the package default) and 1e-5
// (the run's default), to hydratedRel within 1e-6 relative: a regression
// check of the solver on a real paste (pores conducting with 1, C-S-H with
// 1/400, with about a third of the box insulating), and the check that the
// single-precision vectors of the solver keep D/D0 within 1e-6 of the
// double-precision solve at the tolerance a run uses.
func TestDiffusivityHydrated(t *testing.T) {
	if testing.Short() {
		t.Skip("100³ solve")
	}
	box, phase, err := readNPYU8(hydratedFile)
	if err != nil {
		t.Fatal(err)
	}
	var s Solver
	for _, tol := range []float64{1e-6, 1e-5} {
		res, err := s.Diffusivity(box, phase, DiffusivityOptions{Tol: tol, Workers: 1})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("tol %g: D/D0 %.12g, iterations %v", tol, res.Rel, res.Iter)
		for a := range 3 {
			if e := relErr(res.Rel[a], hydratedRel[a]); e > 1e-6 || !res.Conducts[a] {
				t.Errorf("tol %g axis %s: D/D0 %.12g, want %.12g (rel. error %.2g > 1e-6)", tol, axisNames[a], res.Rel[a], hydratedRel[a], e)
			}
		}
	}
}

func benchHydrated(b *testing.B, workers int) { benchHydratedTol(b, workers, 1e-6) }

func benchHydratedTol(b *testing.B, workers int, tol float64) {
	box, phase, err := readNPYU8(hydratedFile)
	if err != nil {
		b.Fatal(err)
	}
	opt := DiffusivityOptions{Tol: tol, Workers: workers}
	var s Solver
	res, err := s.Diffusivity(box, phase, opt)
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("D/D0 %.7g, iterations %v", res.Rel, res.Iter)
	var act int
	for _, m := range s.act {
		if m != 0 {
			act++
		}
	}
	lv := make([]int, len(s.mg))
	for k, c := range s.mg {
		lv[k] = c.n
	}
	b.Logf("active voxels %d of %d; coarse levels %v; solver buffers %.1f bytes per voxel", act, box.Len(), lv, float64(s.footprint())/float64(box.Len()))
	b.ReportAllocs()
	b.ResetTimer()
	c0 := cpuTime()
	for b.Loop() {
		if _, err := s.Diffusivity(box, phase, opt); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(cpuTime()-c0)/float64(b.N), "cpu-ns/op")
}

// cpuTime returns the user and system CPU time of the process, which a
// loaded machine inflates less than the wall-clock time.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkDiffusivityHydrated100 solves the three axes of the 28-day 100³
// paste of testdata to relative residual 1e-6 on one worker.
func BenchmarkDiffusivityHydrated100(b *testing.B) { benchHydrated(b, 1) }

// BenchmarkDiffusivityHydrated100Parallel is BenchmarkDiffusivityHydrated100
// on GOMAXPROCS workers.
func BenchmarkDiffusivityHydrated100Parallel(b *testing.B) { benchHydrated(b, 0) }

// BenchmarkDiffusivityHydrated100Tol5 is BenchmarkDiffusivityHydrated100 to
// relative residual 1e-5, the tolerance of a run's default output.
func BenchmarkDiffusivityHydrated100Tol5(b *testing.B) { benchHydratedTol(b, 1, 1e-5) }

// footprint returns the bytes held by the solver's buffers (capacities),
// its labeler and its multigrid levels included.
func (s *Solver) footprint() int {
	n := cap(s.fcls) + cap(s.act) + 4*cap(s.bfirst) + 3*cap(s.spans) + 8*cap(s.dtab) + 4*(1<<16) + cap(s.ins)
	n += 4 * (cap(s.w) + cap(s.r) + cap(s.p) + cap(s.z) + cap(s.dcode)/4 + cap(s.stack))
	n += 24*cap(s.part) + cap(s.hierAct)
	for _, r := range s.rows {
		n += 8 * (cap(r[0]) + cap(r[1]))
	}
	for _, c := range s.mg {
		n += 4 * (cap(c.ptr) + cap(c.col) + cap(c.val) + cap(c.agg) + cap(c.invd) + cap(c.f) + cap(c.x) + cap(c.x1))
	}
	l := &s.lab
	n += 4*(cap(l.parent)+cap(l.final)+cap(l.cl.Label)+cap(l.cl.Size)/2*2) + 12*cap(l.off) + cap(l.wrap) + 2*cap(l.touch) + cap(l.in) + 3*cap(l.cl.Spans) + 8*cap(l.cl.Size)
	return n
}
