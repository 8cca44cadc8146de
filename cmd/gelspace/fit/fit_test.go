package fit

import (
	"bytes"
	"flag"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gelspace/configs"
)

var updateFit = flag.Bool("update-fit", false, "rewrite testdata/fit/ from the model")

func TestParseMeasured(t *testing.T) {
	// Heat flow: a constant 1 mW/g for 10 h releases 36 J/g (1 mW/g × 1 h
	// = 3.6 J/g; exact by the trapezoid rule).
	c, err := ParseMeasured("f.csv", strings.NewReader("# lab export\ntime_h,heat_flow_mw_per_g\n1,1\n3,1\n5,1\n7,1\n9,1\n11,1\n"))
	if err != nil {
		t.Fatal(err)
	}
	if c.Kind != KindFlow || !c.FromFirst || math.Abs(c.Value[5]-36) > 1e-12 || c.Value[0] != 0 {
		t.Errorf("flow curve: %+v", c)
	}
	c, err = ParseMeasured("a.csv", strings.NewReader("alpha,time_h\n0.01,1\n0.1,4\n0.3,12\n0.45,24\n0.6,72\n"))
	if err != nil || c.Kind != KindAlpha || c.TimeH[4] != 72 || c.Value[3] != 0.45 {
		t.Errorf("alpha curve: %+v, %v", c, err)
	}
}

// fitTruth are the multipliers the synthetic curves were made with.
var fitTruth = Multipliers{1.25, 0.8, 1.2}

// fitSyntheticTimes are the rows of a synthetic curve: half-hourly to
// 72 h, then every 2 h to untilH (a calorimeter left running for weeks,
// so that the through-product tail is in the curve).
func fitSyntheticTimes(untilH float64) []float64 {
	var times []float64
	for h := 0.5; h <= min(72, untilH); h += 0.5 {
		times = append(times, h)
	}
	for h := 74.0; h <= untilH; h += 2 {
		times = append(times, h)
	}
	return times
}

// fitRecoveryTol is the relative error allowed on a recovered multiplier.
const fitRecoveryTol = 0.10

// The fit recovers the multipliers of a curve the model itself produced
// on the same boxes (30³ voxels, two seeds, to 14 d). Dissolution (the
// height and width of the main peak) and through-product (the tail) come
// back within 10 %. Nucleation does not: in the present engine halving or
// doubling it moves the curve by about as much as the change of random
// path that any change of the multipliers brings on a box this small, so
// it is only required to stay inside the search box, and fit.json flags it
// when the misfit hardly moves with it.
func TestFitRecoversSynthetic(t *testing.T) {
	cfg, err := configs.Load("", []string{"box.voxels=30", "curing.until_h=336", "output.times_h=[]"})
	if err != nil {
		t.Fatal(err)
	}
	times := fitSyntheticTimes(336)
	m, err := NewModel(cfg, 2, times, false)
	if err != nil {
		t.Fatal(err)
	}
	ref, err := m.Curve(fitTruth)
	if err != nil {
		t.Fatal(err)
	}
	c := &Measured{TimeH: times, Value: ref, Kind: KindHeat}
	if f := newFitTarget(c).misfit(ref); f != 0 {
		t.Fatalf("misfit of the model against itself = %g, want 0 (the model is deterministic)", f)
	}
	best, f, f0, evals, status, err := fitKinetics(m, newFitTarget(c), Multipliers{1, 1, 1}, Settings{MaxEvals: 120, Simplex: 0.4, Tol: 1e-4, Staged: true, Prior: DefaultPrior})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("truth %.3f, fitted %.3f, misfit %.4g from %.4g, %d evaluations, %s", fitTruth, best, f, f0, evals, status)
	for _, i := range []int{0, 2} {
		if r := best[i] / fitTruth[i]; math.Abs(r-1) > fitRecoveryTol {
			t.Errorf("%s %.3f, want %.3f within 10 %%", MultiplierKeys[i], best[i], fitTruth[i])
		}
	}
	if !(f < 0.5*f0) {
		t.Errorf("misfit %.4g from %.4g: want below half the start", f, f0)
	}
	if evals > 120 {
		t.Errorf("%d evaluations, limit 120", evals)
	}
	// A held multiplier stays exactly where it was put; the others are
	// still fitted (dissolution within 15 % with the other two at truth: a
	// one-dimensional search meets the random-path noise of the 30³ boxes,
	// where a third of the powder is carried outside the box — measured
	// misfit 0.068 at 1.15–1.20 and 0.106 at 1.10 against 0 at the truth
	// 1.25, so the search may stop in a noise dip 10–12 % short).
	fix := Settings{MaxEvals: 40, Simplex: 0.4, Tol: 1e-4, Staged: true, Fixed: [3]bool{false, true, true}}
	got, _, _, _, _, err := fitKinetics(m, newFitTarget(c), Multipliers{1, fitTruth[1], fitTruth[2]}, fix)
	if err != nil {
		t.Fatal(err)
	}
	if got[1] != fitTruth[1] || got[2] != fitTruth[2] || math.Abs(got[0]/fitTruth[0]-1) > 1.5*fitRecoveryTol {
		t.Errorf("nucleation and through-product held: fitted %.4f, want [%.3f %g %g]", got, fitTruth[0], fitTruth[1], fitTruth[2])
	}
}

// The comparison grid is log-spaced at fitPerDecade points per decade from
// 0.5 h to the last row; the feature times and flows of a curve whose heat
// grows linearly in time are exact.
func TestFitTarget(t *testing.T) {
	var times, heat []float64
	for h := 0.25; h <= 100; h += 0.25 {
		times = append(times, h)
		heat = append(heat, 2*h) // 2 J/g per h
	}
	ft := newFitTarget(&Measured{TimeH: times, Value: heat, Kind: KindHeat})
	g := ft.gridH
	if g[0] != 0.5 || g[len(g)-1] != 100 {
		t.Errorf("grid from %g to %g h, want 0.5 to 100", g[0], g[len(g)-1])
	}
	// log10(100/0.5) = 2.3 decades: 46 steps, the last one shortened.
	if n := len(g); n < 46 || n > 48 {
		t.Errorf("%d grid points, want 47±1", n)
	}
	for i := 1; i < len(g)-1; i++ {
		if r := math.Log10(g[i]/g[i-1]) * fitPerDecade; math.Abs(r-1) > 1e-9 {
			t.Fatalf("grid step %d: %g of a 1/%d decade", i, r, fitPerDecade)
		}
	}
	for i, p := range fitFractions {
		if want := math.Log(p * 100); math.Abs(ft.lt[i]-want) > 1e-9 {
			t.Errorf("time at %g of the final heat: ln t = %g, want %g", p, ft.lt[i], want)
		}
	}
	if p := ft.misfitParts(heat); p != (misfitParts{}) {
		t.Errorf("misfit against itself %+v, want 0", p)
	}
	// Twice the heat: the flow is doubled (ln 2 per interval wherever the
	// floor is negligible), the heat off by the measured value, and the
	// features reached at half the time.
	twice := make([]float64, len(heat))
	for i, v := range heat {
		twice[i] = 2 * v
	}
	p := ft.misfitParts(twice)
	if math.Abs(p.Time-math.Log(2)) > 0.02 || math.Abs(p.Flow-math.Log(2)) > 0.01 || p.Heat < 0.3 {
		t.Errorf("twice the heat: %+v, want time and flow terms ≈ ln 2 = 0.693", p)
	}
}

// TestFitTestdata checks the invented lab curves of testdata/fit (made by
// the model with fitTruth on the default mix, 40³ voxels, seeds 7–9;
// rewrite with -update-fit).
func TestFitTestdata(t *testing.T) {
	dir := filepath.Join("..", "..", "..", "testdata", "fit")
	if *updateFit {
		cfg, err := configs.Load("", []string{"box.voxels=40", "curing.until_h=72", "output.times_h=[]"})
		if err != nil {
			t.Fatal(err)
		}
		var times []float64
		for t := 0.5; t <= 72; t += 0.5 {
			times = append(times, t)
		}
		m, err := NewModel(cfg, 3, times, false)
		if err != nil {
			t.Fatal(err)
		}
		heat, err := m.Curve(fitTruth)
		if err != nil {
			t.Fatal(err)
		}
		m.alpha = true
		alpha, err := m.Curve(fitTruth)
		if err != nil {
			t.Fatal(err)
		}
		head := fmt.Sprintf("# Invented isothermal calorimetry of cement RW-G (Redhaven Works, invented), 20 °C, w/c 0.45.\n# Made by the gelspace model itself (40³ voxels, seeds 7-9, dissolution %.2f, nucleation %.2f, through-product %.2f): synthetic, not measured.\n", fitTruth[0], fitTruth[1], fitTruth[2])
		var h, f, a bytes.Buffer
		h.WriteString(head + "time_h,heat_j_per_g\n")
		f.WriteString(head + "time_h,heat_flow_mw_per_g\n")
		a.WriteString(head + "time_h,alpha\n")
		for i, tt := range times {
			fmt.Fprintf(&h, "%g,%.3f\n", tt, heat[i])
			fmt.Fprintf(&a, "%g,%.5f\n", tt, alpha[i])
			if i > 0 && i%2 == 1 { // flow at hourly mid-points from the heat increments
				flow := (heat[i] - heat[i-1]) / ((times[i] - times[i-1]) * 3.6)
				fmt.Fprintf(&f, "%g,%.4f\n", 0.5*(tt+times[i-1]), flow)
			}
		}
		for name, b := range map[string][]byte{"rw-g-heat-20c.csv": h.Bytes(), "rw-g-flow-20c.csv": f.Bytes(), "rw-g-alpha-20c.csv": a.Bytes()} {
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	for _, name := range []string{"rw-g-heat-20c.csv", "rw-g-flow-20c.csv", "rw-g-alpha-20c.csv"} {
		c, err := ReadMeasured(filepath.Join(dir, name))
		if err != nil {
			t.Fatal(err)
		}
		last := c.Value[len(c.Value)-1]
		switch c.Kind {
		case KindHeat:
			// 3 d heat of a Portland cement: a few hundred J/g (Lerch &
			// Bogue phase heats as given by Taylor 1997, from memory:
			// total ≈ 450–500 J/g for this composition); wide band.
			if last < 150 || last > 480 {
				t.Errorf("%s: 72 h heat %g J/g outside 150–480", name, last)
			}
		case KindAlpha:
			// α at 3 d, w/c 0.45: textbook range 0.5–0.75 (from memory).
			if last < 0.45 || last > 0.85 {
				t.Errorf("%s: 72 h α %g outside 0.45–0.85", name, last)
			}
		}
	}
}
