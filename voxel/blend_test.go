package voxel

import (
	"bytes"
	"math/rand/v2"
	"testing"

	"gelspace/kinetics"
)

// sfPaste is the demo paste with a share of its pore-water voxels turned
// into single-voxel silica fume (sub-voxel powder).
func sfPaste(t testing.TB, n int, share float64, seed uint64) *Grid {
	g := enginePaste(t, n, 1, 0.45, seed)
	r := rand.New(rand.NewPCG(seed, 7))
	for i, p := range g.Phase {
		if p == kinetics.Water && r.Float64() < share {
			g.Phase[i] = kinetics.SilicaFume
		}
	}
	return g
}

func sfParams() kinetics.Params {
	p := kinetics.DefaultParams()
	p.DissolutionOf(kinetics.SilicaFume).SurfacePerUM = 45
	return p
}

// checkTallies recomputes every per-phase tally of the rate classes from
// the class sets and compares it with the engine's running ones.
func checkTallies(t *testing.T, e *Engine, what string) {
	t.Helper()
	for d := range e.dph {
		var w, h, aw, ah int
		for c := 1; c < classesPerPhase; c++ {
			m := len(e.sets[d*classesPerPhase+c])
			w += m * int(triW[c])
			h += m * int(triH[c])
			if triW[c] > 0 {
				aw += m
			} else {
				ah += m
			}
		}
		if w != e.sumW[d] || h != e.sumH[d] || aw != e.nAccW[d] || ah != e.nAccH[d] {
			t.Fatalf("%s: %s tallies faces %d/%d accessible %d/%d, recomputed %d/%d and %d/%d",
				what, kinetics.Lookup(e.dph[d]).Key, e.sumW[d], e.sumH[d], e.nAccW[d], e.nAccH[d], w, h, aw, ah)
		}
	}
}

// The running tallies of the rate classes stay equal to a recount from the
// sets, in the engine, in its clones while they run on (the clones must not
// share them) and after a checkpoint round trip; and the silica fume takes
// CH only once portlandite has formed.
func TestBlendTallies(t *testing.T) {
	g := sfPaste(t, 24, 0.08, 2)
	e, err := NewEngine(g, EngineSettings{Params: sfParams(), Thermal: kinetics.Thermal{TempC: 20}, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	checkTallies(t, e, "start")
	for _, th := range []float64{2, 12, 48, 168} {
		c := e.Clone()
		if err := c.AdvanceTo(th + 24); err != nil {
			t.Fatal(err)
		}
		checkTallies(t, c, "clone")
		if err := e.AdvanceTo(th); err != nil {
			t.Fatal(err)
		}
		checkTallies(t, e, "engine after its clone ran")
		if e.Count(kinetics.CH) == 0 && e.AlphaOf(kinetics.SilicaFume) > 0 {
			t.Fatalf("at %g h silica fume reacted (%.3f) before any portlandite formed", th, e.AlphaOf(kinetics.SilicaFume))
		}
	}
	set := EngineSettings{Params: sfParams(), Thermal: kinetics.Thermal{TempC: 20}, Seed: 3}
	var buf bytes.Buffer
	if err := e.WriteCheckpoint(&buf, &set, nil); err != nil {
		t.Fatal(err)
	}
	r, _, err := ReadCheckpoint(&buf, set)
	if err != nil {
		t.Fatal(err)
	}
	checkTallies(t, r, "restored")
	if a := e.AlphaOf(kinetics.SilicaFume); !(a > 0.3) {
		t.Errorf("silica fume degree of reaction at 7 d = %.3f, want > 0.3", a)
	}
}
