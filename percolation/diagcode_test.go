package percolation

import (
	"math/rand/v2"
	"testing"
)

// TestDiagCodes checks the coded inverse diagonal: every active voxel's
// value is float32(1/A_ii) of the double-precision diagonal formed voxel by
// voxel (naiveSum), and a solve whose table is cut to a few codes, so that
// most voxels take the escape and recompute their value, gives bit for bit
// the same D/D0, iterations and residuals, with periodic and electrode
// boundaries and with a field of many classes.
func TestDiagCodes(t *testing.T) {
	type tc struct {
		name string
		box  Box
		d    []float64
	}
	var cases []tc
	for _, open := range []bool{false, true} {
		box := PeriodicBox(18, 16, 14)
		if open {
			box = Box{NX: 18, NY: 16, NZ: 14, Periodic: [3]bool{false, true, false}}
		}
		phase := randomPaste(box, 3, 0.4, 0.3)
		d := make([]float64, box.Len())
		tab := DefaultDiffusivities()
		for i, p := range phase {
			d[i] = tab[p]
		}
		cases = append(cases, tc{"paste", box, d})
	}
	// A field of 200 values: far more distinct diagonals than codes.
	box := PeriodicBox(16, 16, 16)
	rng := rand.New(rand.NewPCG(5, 6))
	d := make([]float64, box.Len())
	for i := range d {
		if rng.Float64() < 0.7 {
			d[i] = 0.01 + float64(rng.IntN(200))/200
		}
	}
	cases = append(cases, tc{"field", box, d})
	for _, c := range cases {
		var full, cut Solver
		cut.maxCodes = 2
		want, err := full.DiffusivityField(c.box, c.d, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		escapes := 0
		for i := range full.dcode {
			if full.dcode[i] == dEscape {
				escapes++
			}
		}
		got, err := cut.DiffusivityField(c.box, c.d, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if got != want {
			t.Errorf("%s %+v: with 2 codes %+v, with all %+v", c.name, c.box.Periodic, got, want)
		}
		cutEsc := 0
		for i := range cut.dcode {
			if cut.dcode[i] == dEscape {
				cutEsc++
			}
			m := cut.minv(i)
			if full.minv(i) != m {
				t.Fatalf("%s voxel %d: 1/A_ii %v with 2 codes, %v with all", c.name, i, m, full.minv(i))
			}
			if m != 0 {
				a, _ := cut.naiveSum(make([]float32, c.box.Len()), i)
				if want := float32(1 / a); m != want {
					t.Fatalf("%s voxel %d: 1/A_ii %v, naive %v", c.name, i, m, want)
				}
			}
		}
		t.Logf("%s: escapes %d with all codes, %d with 2", c.name, escapes, cutEsc)
		if cutEsc == 0 || (c.name == "field" && escapes == 0) {
			t.Errorf("%s: no escapes (%d, %d): the test does not reach the escape path", c.name, escapes, cutEsc)
		}
	}
}
