package voxel

import (
	"testing"

	"gelspace/kinetics"
)

// demoMix is the demo cement of the engine tests, mass percent.
var demoMix = map[string]float64{"c3s": 58, "c2s": 17, "c3a": 7.5, "c4af": 10.5, "gypsum": 5}

// enginePaste packs a box of edge n voxels of 1 µm for engine tests with
// the real packing code: the demo cement ground to a Rosin–Rammler
// distribution (x′ 14 µm, n 1.05, the default config) at w/c wc.
func enginePaste(t testing.TB, n int, voxelUM, wc float64, seed uint64) *Grid {
	t.Helper()
	return mixPaste(t, demoMix, n, voxelUM, wc, seed)
}

// newTestEngine hydrates g with the default parameters.
func newTestEngine(t testing.TB, g *Grid, tempC float64, sealed bool, seed uint64) *Engine {
	t.Helper()
	e, err := NewEngine(g, EngineSettings{Params: kinetics.DefaultParams(), Thermal: kinetics.Thermal{TempC: tempC}, Sealed: sealed, Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	return e
}
