package run

import (
	"fmt"
	"math"
	"os"
	"testing"

	"gelspace/configs"
	"gelspace/kinetics"
)

// coarseAlpha packs and hydrates the demo cement with the given PSD on an
// n³ box and returns α (and the carried fraction) at the given ages.
func coarseAlpha(t *testing.T, n int, seed int64, xUM float64, ages []float64) (alpha []float64, carried float64) {
	t.Helper()
	cfg, err := configs.Load("", []string{fmt.Sprintf("box.voxels=%d", n), fmt.Sprintf("seed=%d", seed),
		fmt.Sprintf("psd.rosin_rammler.x_um=%g", xUM), "output.diffusivity=false"})
	if err != nil {
		t.Fatal(err)
	}
	m, err := Resolve(cfg)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Pack(m)
	if err != nil {
		t.Fatal(err)
	}
	set, err := cfg.EngineSettings()
	if err != nil {
		t.Fatal(err)
	}
	e, err := m.NewEngine(res.Grid, set)
	if err != nil {
		t.Fatal(err)
	}
	for _, a := range ages {
		if err := e.AdvanceTo(a); err != nil {
			t.Fatal(err)
		}
		alpha = append(alpha, e.Alpha())
	}
	return alpha, e.CarriedFraction()
}

func TestCoarseProbe(t *testing.T) {
	if os.Getenv("GELSPACE_PROBE") == "" {
		t.Skip()
	}
	_ = math.Abs
	_ = kinetics.C3S
	for _, n := range []int{50, 100, 200} {
		if n == 200 && os.Getenv("GELSPACE_PROBE") != "2" {
			continue
		}
		a, c := coarseAlpha(t, n, 1, 25, []float64{24, 168, 672})
		t.Logf("%d³: carried %.3f  α 1d %.3f 7d %.3f 28d %.3f", n, c, a[0], a[1], a[2])
	}
}
