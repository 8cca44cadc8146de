package run

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/voxel"
)

// packedMix resolves and packs the embedded default with the --set
// overrides sets.
func packedMix(t *testing.T, sets ...string) (*Mix, *voxel.PackResult) {
	t.Helper()
	cfg, err := configs.Load("", sets)
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
	return m, res
}

// coarseEngine packs the demo cement with Rosin–Rammler x′ = xUM on an n³
// box and returns the mix and the engine with its carried grains.
func coarseEngine(t *testing.T, n int, seed int64, xUM float64) (*Mix, *voxel.Engine) {
	t.Helper()
	m, res := packedMix(t, fmt.Sprintf("box.voxels=%d", n), fmt.Sprintf("seed=%d", seed),
		fmt.Sprintf("psd.rosin_rammler.x_um=%g", xUM), "output.diffusivity=false")
	cfg := m.Cfg
	set, err := cfg.EngineSettings()
	if err != nil {
		t.Fatal(err)
	}
	e, err := m.NewEngine(res.Grid, set)
	if err != nil {
		t.Fatal(err)
	}
	return m, e
}

// coarseAlpha returns α at the given ages, averaged over seeds, and the
// carried fraction.
func coarseAlpha(t *testing.T, n int, seeds []int64, xUM float64, ages []float64) (alpha []float64, carried float64) {
	t.Helper()
	alpha = make([]float64, len(ages))
	for _, s := range seeds {
		_, e := coarseEngine(t, n, s, xUM)
		for k, a := range ages {
			if err := e.AdvanceTo(a); err != nil {
				t.Fatal(err)
			}
			alpha[k] += e.Alpha() / float64(len(seeds))
		}
		carried = e.CarriedFraction()
	}
	return alpha, carried
}

// boxIndependence checks α at 1, 7 and 28 d of the coarse cement (x′ =
// 25 µm) on two box sizes within 0.03 (model requirement of the carried
// coarse grains: every gram of the powder takes part, so the result must
// not depend on how much of it the box can hold).
func boxIndependence(t *testing.T, small, large int, seeds []int64) {
	ages := []float64{24, 168, 672}
	as, cs := coarseAlpha(t, small, seeds, 25, ages)
	al, cl := coarseAlpha(t, large, seeds, 25, ages)
	t.Logf("%d³ (%.1f %% carried): α %.3f %.3f %.3f; %d³ (%.1f %% carried): α %.3f %.3f %.3f",
		small, 100*cs, as[0], as[1], as[2], large, 100*cl, al[0], al[1], al[2])
	if !(cs > cl && cs > 0.1) {
		t.Fatalf("carried fractions %.3f (%d³) and %.3f (%d³): the smaller box must carry more", cs, small, cl, large)
	}
	for k, age := range ages {
		if d := math.Abs(as[k] - al[k]); d > 0.03 {
			t.Errorf("α at %g h: %.3f on %d³, %.3f on %d³: differ by %.3f > 0.03", age, as[k], small, al[k], large, d)
		}
	}
}

func TestCoarseBoxIndependence50(t *testing.T) { boxIndependence(t, 50, 100, []int64{1}) }

func TestCoarseBoxIndependence200(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("GELSPACE_LONG=1: 200³ box")
	}
	boxIndependence(t, 100, 200, []int64{1})
}

// TestCoarseMassBalance: the packed powder plus the carried powder equals
// the cement of the mix at its w/c, from the water in the box, within
// 0.5 % (issue band), and what is carried is the PSD's coarse fraction.
func TestCoarseMassBalance(t *testing.T) {
	for _, c := range []struct {
		n int
		x float64
	}{{50, 25}, {100, 25}, {50, 14}} {
		m, e := coarseEngine(t, c.n, 1, c.x)
		g := e.Grid()
		vox := math.Pow(g.VoxelUM*1e-4, 3)
		packed := 0.0
		for _, id := range g.Phase {
			if kinetics.IsAnhydrous(id) {
				packed += kinetics.Lookup(id).DensityGPerCM3 * vox
			}
		}
		water := float64(e.Count(kinetics.Water)) * vox * kinetics.WaterDensity
		mix := water / m.Cfg.Mix.WC
		carried := e.CarriedFraction() * e.CementG()
		if d := math.Abs(packed+carried-mix) / mix; d > 0.005 {
			t.Errorf("%d³, x′ %g: packed %.4g g + carried %.4g g = %.4g g, mix %.4g g: off by %.2f %%", c.n, c.x, packed, carried, packed+carried, mix, 100*d)
		}
		if d := math.Abs(e.CarriedFraction() - m.Classes.Truncated); d > 0.005 {
			t.Errorf("%d³, x′ %g: carried %.4f of the mass, the PSD's coarse fraction is %.4f", c.n, c.x, e.CarriedFraction(), m.Classes.Truncated)
		}
		if math.Abs(e.CementG()-(packed+carried)) > 1e-9*e.CementG() {
			t.Errorf("engine cement %.6g g, packed + carried %.6g g", e.CementG(), packed+carried)
		}
	}
}

// TestCoarseCheckpoint: a clone and a checkpoint of an engine with carried
// grains go on exactly as the original.
func TestCoarseCheckpoint(t *testing.T) {
	_, e := coarseEngine(t, 40, 1, 25)
	if err := e.AdvanceTo(6); err != nil {
		t.Fatal(err)
	}
	c := e.Clone()
	for _, x := range []*voxel.Engine{e, c} {
		if err := x.AdvanceTo(30); err != nil {
			t.Fatal(err)
		}
	}
	if e.Alpha() != c.Alpha() || e.HeatJPerG() != c.HeatJPerG() || e.CarriedAlpha() != c.CarriedAlpha() {
		t.Fatalf("clone: α %v vs %v, carried α %v vs %v", e.Alpha(), c.Alpha(), e.CarriedAlpha(), c.CarriedAlpha())
	}
	if !(e.CarriedAlpha() > 0) {
		t.Fatalf("carried α %v at 30 h: the carried grains do not react", e.CarriedAlpha())
	}
}

// fineness runs the demo cement at x′ and returns its summary.
func fineness(t *testing.T, xUM float64, seed int64) *Summary {
	t.Helper()
	cfg, err := configs.Load("", []string{"box.voxels=50", fmt.Sprintf("seed=%d", seed), fmt.Sprintf("psd.rosin_rammler.x_um=%g", xUM),
		"output.diffusivity=false", "output.times_h=[2, 4, 6, 8, 12, 24, 168, 672]"})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := Run(cfg, Options{Out: dir}); err != nil {
		t.Fatal(err)
	}
	data, err := os.ReadFile(filepath.Join(dir, "summary.json"))
	if err != nil {
		t.Fatal(err)
	}
	var s Summary
	if err := json.Unmarshal(data, &s); err != nil {
		t.Fatal(err)
	}
	return &s
}

func alphaAtDays(s *Summary, d float64) float64 {
	for _, a := range s.AtAge {
		if a.Days == d {
			return a.Alpha
		}
	}
	return math.NaN()
}

// TestFinenessTrends: a finer grind sets earlier, peaks earlier and higher
// and hydrates further at 1 d; α at 28 d is less sensitive to the grind
// than α at 1 d, in relative terms: the ratio fine/coarse is smaller at
// 28 d (common practice: fineness acts mostly on the early reaction; the
// absolute lead may persist, as the coarsest grains never hydrate fully).
func TestFinenessTrends(t *testing.T) {
	fine, coarse := fineness(t, 8, 1), fineness(t, 25, 1)
	get := func(p *float64) float64 {
		if p == nil {
			return math.NaN()
		}
		return *p
	}
	sf, sc := get(fine.SetTimeH), get(coarse.SetTimeH)
	pf, pc := get(fine.Calorimetry.MainPeakTimeH), get(coarse.Calorimetry.MainPeakTimeH)
	hf, hc := get(fine.Calorimetry.MainPeakMWPerG), get(coarse.Calorimetry.MainPeakMWPerG)
	a1f, a1c := alphaAtDays(fine, 1), alphaAtDays(coarse, 1)
	a28f, a28c := alphaAtDays(fine, 28), alphaAtDays(coarse, 28)
	t.Logf("x′ 8 µm: set %.2f h, peak %.2f h at %.2f mW/g, α %.3f (1 d) %.3f (28 d); x′ 25 µm: set %.2f h, peak %.2f h at %.2f mW/g, α %.3f %.3f",
		sf, pf, hf, a1f, a28f, sc, pc, hc, a1c, a28c)
	if !(sf < sc) {
		t.Errorf("set %.2f h (x′ 8) not before %.2f h (x′ 25)", sf, sc)
	}
	if !(pf < pc && hf > hc) {
		t.Errorf("main peak %.2f h, %.2f mW/g (x′ 8) not earlier and higher than %.2f h, %.2f mW/g (x′ 25)", pf, hf, pc, hc)
	}
	if !(a1f > a1c) {
		t.Errorf("α at 1 d %.3f (x′ 8) not above %.3f (x′ 25)", a1f, a1c)
	}
	if !(a28f/a28c < a1f/a1c) {
		t.Errorf("α ratio fine/coarse %.3f at 28 d not below its %.3f at 1 d", a28f/a28c, a1f/a1c)
	}
}
