package voxel

import (
	"fmt"
	"testing"

	"gelspace/kinetics"
)

var demoShares = map[kinetics.ID]float64{kinetics.C3S: 0.60, kinetics.C2S: 0.17, kinetics.C3A: 0.08, kinetics.C4AF: 0.10}

func TestEngineExplore(t *testing.T) {
	g := testPaste(t, 50, 0.39, demoShares, 0.07, 1)
	e, err := NewEngine(g, EngineSettings{Params: kinetics.DefaultParams(), Thermal: kinetics.Thermal{TempC: 20}, Seed: 3})
	if err != nil {
		t.Fatal(err)
	}
	prevH, prevQ := 0.0, 0.0
	for _, h := range []float64{0.1, 0.25, 0.5, 1, 2, 3, 4, 5, 6, 8, 10, 12, 14, 16, 20, 24, 36, 48, 72, 168, 336, 672} {
		if err := e.AdvanceTo(h); err != nil {
			t.Fatal(err)
		}
		q := e.HeatJPerG()
		ev, st := e.Events()
		fmt.Printf("t=%6.1f α=%.3f c3s=%.3f c2s=%.3f c3a=%.3f q=%6.1f flow=%.3f mW/g ev=%d steps=%d freeCSH=%d freeCH=%d csh=%d ch=%d aft=%d afm=%d water=%d\n", h, e.Alpha(), e.AlphaOf(kinetics.C3S), e.AlphaOf(kinetics.C2S), e.AlphaOf(kinetics.C3A), q, (q-prevQ)/(h-prevH)/3.6, ev, st,
			e.Dissolved(kinetics.CSHOuter), e.Dissolved(kinetics.CH), e.Count(kinetics.CSHInner)+e.Count(kinetics.CSHOuter), e.Count(kinetics.CH), e.Count(kinetics.AFt), e.Count(kinetics.AFm), e.Count(kinetics.Water))
		prevH, prevQ = h, q
	}
}
