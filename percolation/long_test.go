package percolation

import (
	"math/rand/v2"
	"os"
	"testing"

	"gelspace/kinetics"
)

func skipUnlessLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("set GELSPACE_LONG=1 for the larger studies")
	}
}

// TestLongSitePercolation64 repeats the threshold check of
// TestSitePercolationThreshold at L = 64 with 100 seeds per point, against
// p_c = 0.3116077 (Wang, Zhou, Zhang, Garoni & Deng, Phys. Rev. E 87 (2013)
// 052107; confirmed), and checks that the spanning
// probability rises monotonically through the window.
func TestLongSitePercolation64(t *testing.T) {
	skipUnlessLong(t)
	const L, seeds = 64, 100
	box := Box{NX: L, NY: L, NZ: L}
	var l Labeler
	in := make([]bool, box.Len())
	ps := []float64{0.25, 0.29, 0.30, 0.3116077, 0.32, 0.33, 0.40}
	var prev float64
	for k, p := range ps {
		hits := 0
		for s := range seeds {
			rng := rand.New(rand.NewPCG(uint64(s), 1000+uint64(k)))
			for i := range in {
				in[i] = rng.Float64() < p
			}
			if l.Label(box, in).Connectivity().Span[2] {
				hits++
			}
		}
		prob := float64(hits) / seeds
		t.Logf("p = %.4f: spanning probability along z %.2f", p, prob)
		if prob+0.1 < prev {
			t.Errorf("p = %.4f: probability %.2f fell from %.2f", p, prob, prev)
		}
		prev = prob
		switch {
		case p == 0.29 && prob >= 0.5, p == 0.33 && prob <= 0.5:
			t.Errorf("p = %.4f: spanning probability %.2f on the wrong side of 1/2", p, prob)
		case p == 0.25 && prob > 0.02, p == 0.40 && prob < 0.98:
			t.Errorf("p = %.4f: spanning probability %.2f, want near %v", p, prob, p > 0.3)
		}
	}
}

// TestLongMaxwell64 checks an insulating sphere at f ≈ 0.05 in a periodic
// 64³ box against Maxwell's (1 − f)/(1 + f/2) (Maxwell 1873;
// exact to first order in f) within 2 %, in the periodic and the open
// (electrode) boundary modes.
func TestLongMaxwell64(t *testing.T) {
	skipUnlessLong(t)
	const L, r = 64, 14.5
	for _, periodic := range []bool{true, false} {
		box := Box{NX: L, NY: L, NZ: L, Periodic: [3]bool{periodic, periodic, periodic}}
		phase, f := centredSphere(box, r, kinetics.C3S)
		want := (1 - f) / (1 + f/2)
		res, err := Diffusivity(box, phase, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("periodic %v, f = %.4f: D/D0 %v, Maxwell %.5f, iterations %v", periodic, f, res.Rel, want, res.Iter)
		for a := range 3 {
			if e := relErr(res.Rel[a], want); e > 0.02 {
				t.Errorf("periodic %v axis %s: D/D0 %.5f, Maxwell %.5f (rel. error %.3f)", periodic, axisNames[a], res.Rel[a], want, e)
			}
		}
	}
}
