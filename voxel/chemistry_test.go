package voxel

import (
	"math"
	"os"
	"testing"

	"gelspace/kinetics"
)

// The checks of the engine's chemistry against published behaviour: the
// sulfate balance, the water and space limit, temperature, limestone. Fast
// checks run on small boxes; the 100³ studies run with GELSPACE_LONG=1.

// rwgMix is the default cement of the command (RW-G, invented): the demo
// clinker with 2 % limestone.
var rwgMix = map[string]float64{"c3s": 58, "c2s": 17, "c3a": 7.5, "c4af": 10.5, "gypsum": 5, "calcite": 2}

// mixPaste packs a box of edge n of the cement mix at w/c wc.
func mixPaste(t testing.TB, mix map[string]float64, n int, voxelUM, wc float64, seed uint64) *Grid {
	t.Helper()
	c, err := kinetics.NewComposition(mix)
	if err != nil {
		t.Fatal(err)
	}
	psd, err := RosinRammler(14, 1.05)
	if err != nil {
		t.Fatal(err)
	}
	cls, err := psd.Classes(voxelUM, n)
	if err != nil {
		t.Fatal(err)
	}
	pops := Populations(c.PasteVolumeFractions(wc), n*n*n, Polymineral)
	res, err := Pack(PackSpec{NX: n, NY: n, NZ: n, VoxelUM: voxelUM, Classes: cls, Pops: pops, Seed: seed})
	if err != nil {
		t.Fatal(err)
	}
	return res.Grid
}

// curve is a run sampled every 0.25 h, as the command samples it.
type curve struct {
	timeH, heat, flow    []float64 // h, J/g, mW/g
	gypsumGoneH          float64   // first sample with no solid sulfate left; NaN if never
	alpha                map[float64]float64
	phaseAlpha           map[float64][4]float64 // C3S, C2S, C3A, C4AF
	aft, hydrogarnet, mc map[float64]int
}

var clinkerIDs = [4]kinetics.ID{kinetics.C3S, kinetics.C2S, kinetics.C3A, kinetics.C4AF}

func sampleRun(t testing.TB, e *Engine, untilH float64, marks ...float64) curve {
	t.Helper()
	c := curve{gypsumGoneH: math.NaN(), alpha: map[float64]float64{}, phaseAlpha: map[float64][4]float64{},
		aft: map[float64]int{}, hydrogarnet: map[float64]int{}, mc: map[float64]int{}}
	const dt = 0.25
	prev := 0.0
	for k := 1; float64(k)*dt <= untilH+1e-9; k++ {
		h := float64(k) * dt
		if err := e.AdvanceTo(h); err != nil {
			t.Fatal(err)
		}
		q := e.HeatJPerG()
		c.timeH = append(c.timeH, h)
		c.heat = append(c.heat, q)
		c.flow = append(c.flow, (q-prev)/dt/3.6)
		prev = q
		if math.IsNaN(c.gypsumGoneH) && e.Count(kinetics.Gypsum)+e.Count(kinetics.Hemihydrate)+e.Count(kinetics.Anhydrite) == 0 {
			c.gypsumGoneH = h
		}
		for _, m := range marks {
			if math.Abs(h-m) < 1e-9 {
				c.alpha[m] = e.Alpha()
				var pa [4]float64
				for i, id := range clinkerIDs {
					pa[i] = e.AlphaOf(id)
				}
				c.phaseAlpha[m] = pa
				c.aft[m] = e.Count(kinetics.AFt)
				c.hydrogarnet[m] = e.Count(kinetics.Hydrogarnet)
				c.mc[m] = e.Count(kinetics.Monocarbonate) + e.Count(kinetics.Hemicarbonate)
			}
		}
	}
	return c
}

// peak returns the time and height of the largest heat flow in [fromH, toH].
func (c *curve) peak(fromH, toH float64) (float64, float64) {
	bt, bf := math.NaN(), -1.0
	for k, h := range c.timeH {
		if h >= fromH && h <= toH && c.flow[k] > bf {
			bt, bf = h, c.flow[k]
		}
	}
	return bt, bf
}

// smoothed returns the heat flow averaged over a window of ±w samples, to
// read peak times on boxes whose flow is noisy.
func (c *curve) smoothed(w int) curve {
	s := *c
	s.flow = make([]float64, len(c.flow))
	for k := range c.flow {
		lo, hi := max(0, k-w), min(len(c.flow)-1, k+w)
		var sum float64
		for j := lo; j <= hi; j++ {
			sum += c.flow[j]
		}
		s.flow[k] = sum / float64(hi-lo+1)
	}
	return s
}

// TestSulfateBalance: gypsum is used up within about 8–36 h at 20 °C in a
// properly sulfated cement, sooner in an under-sulfated one and later in an
// over-sulfated one (common practice; the optimum-SO3 test by calorimetry
// builds on it, ASTM C563, from memory). The aluminate (sulfate-depletion)
// peak comes after the main silicate peak and is lower than it (common
// practice for a properly sulfated Portland cement).
func TestSulfateBalance(t *testing.T) {
	gone := map[float64]float64{}
	for _, gyp := range []float64{2.5, 5, 8} {
		mix := map[string]float64{"c3s": 58, "c2s": 17, "c3a": 7.5, "c4af": 10.5, "gypsum": gyp, "calcite": 2}
		e := newTestEngine(t, mixPaste(t, mix, 50, 1, 0.5, 31), 20, false, 4)
		c := sampleRun(t, e, 96)
		gone[gyp] = c.gypsumGoneH
		if gyp == 5 {
			if !(c.gypsumGoneH >= 8 && c.gypsumGoneH <= 36) {
				t.Errorf("5 %% gypsum used up at %.2f h, want 8–36 h", c.gypsumGoneH)
			}
			s := c.smoothed(4)
			mainH, mainF := s.peak(3, c.gypsumGoneH-1)
			_, alF := s.peak(c.gypsumGoneH-1, c.gypsumGoneH+6)
			if !(mainH < c.gypsumGoneH) || !(alF < mainF) {
				t.Errorf("main peak %.2f mW/g at %.2f h, aluminate peak %.2f mW/g after %.2f h: want the aluminate peak later and lower", mainF, mainH, alF, c.gypsumGoneH)
			}
		}
	}
	t.Logf("gypsum used up at %.2f h (2.5 %%), %.2f h (5 %%), %.2f h (8 %%)", gone[2.5], gone[5], gone[8])
	if !(gone[2.5] < gone[5] && (gone[5] < gone[8] || math.IsNaN(gone[8]))) {
		t.Errorf("gypsum used up at %.2f h (2.5 %%), %.2f h (5 %%), %.2f h (8 %%): want under < normal < over", gone[2.5], gone[5], gone[8])
	}
}

// TestNoStrandedVoxel: every voxel of a phase that dissolves (or is drawn
// as a co-reactant) that touches pore water or any hydrate is in a rate
// class, so a voxel buried in CH, ettringite or monosulfate still reacts
// through the product (the fix of a late heat spike set off by one buried
// gypsum voxel).
func TestNoStrandedVoxel(t *testing.T) {
	e := newTestEngine(t, mixPaste(t, rwgMix, 30, 1, 0.4, 32), 20, false, 5)
	for _, h := range []float64{12, 48, 168} {
		if err := e.AdvanceTo(h); err != nil {
			t.Fatal(err)
		}
		var nb [6]int
		for i, id := range e.g.Phase {
			if e.dOf[id] < 0 {
				continue
			}
			e.g.Neighbours(i, &nb)
			touches := false
			for _, j := range nb {
				if q := e.g.Phase[j]; q == kinetics.Water || kinetics.IsHydrate(q) {
					touches = true
				}
			}
			if touches && e.cls[i] == noClass {
				t.Fatalf("at %g h: voxel %d of %s touches water or product but is in no rate class", h, i, kinetics.Lookup(id).Key)
			}
		}
	}
}

// TestNoLateHeatSpike: on the default 100³ box the heat flow never rises
// by more than 0.15 mW/g between 0.25 h samples after 48 h (a late rise
// would need a mechanism; the issue measured a 2.7 mW/g spike at 149 h
// from one buried gypsum voxel).
func TestNoLateHeatSpike(t *testing.T) {
	if testing.Short() {
		t.Skip("100³ run")
	}
	e := newTestEngine(t, mixPaste(t, rwgMix, 100, 1, 0.45, 7), 20, false, 7)
	c := sampleRun(t, e, 672)
	worst, at := 0.0, 0.0
	for k := 1; k < len(c.flow); k++ {
		if c.timeH[k] > 48 && c.flow[k]-c.flow[k-1] > worst {
			worst, at = c.flow[k]-c.flow[k-1], c.timeH[k]
		}
	}
	t.Logf("largest rise after 48 h: %.3f mW/g at %.2f h; gypsum used up at %.2f h", worst, at, c.gypsumGoneH)
	if worst > 0.15 {
		t.Errorf("heat flow rises by %.3f mW/g at %.2f h (limit 0.15)", worst, at)
	}
}

// TestLimestone: with 2 % limestone, calcite reacts with the aluminates to
// carboaluminates and ettringite persists through 28 days, with no
// hydrogarnet at 20 °C (Matschei, Lothenbach & Glasser, Cem. Concr. Res.
// 37 (2007); Lothenbach et al., Cem. Concr. Res. 38 (2008), from memory).
// Without limestone the ettringite turns to monosulfate instead.
func TestLimestone(t *testing.T) {
	e := newTestEngine(t, mixPaste(t, rwgMix, 50, 1, 0.5, 33), 20, false, 6)
	runTo(t, e, []float64{672})
	if e.Count(kinetics.AFt) == 0 || e.Count(kinetics.Hydrogarnet) != 0 || e.Count(kinetics.Monocarbonate)+e.Count(kinetics.Hemicarbonate) == 0 {
		t.Errorf("with limestone at 28 d: AFt %d, hydrogarnet %d, carboaluminates %d voxels: want AFt and carboaluminates, no hydrogarnet",
			e.Count(kinetics.AFt), e.Count(kinetics.Hydrogarnet), e.Count(kinetics.Monocarbonate)+e.Count(kinetics.Hemicarbonate))
	}
	if e.AlphaOf(kinetics.Calcite) <= 0 {
		t.Error("no calcite reacted")
	}
	plain := newTestEngine(t, enginePaste(t, 50, 1, 0.5, 33), 20, false, 6)
	runTo(t, plain, []float64{672})
	if plain.Count(kinetics.AFm) == 0 || plain.Count(kinetics.Monocarbonate) != 0 {
		t.Errorf("without limestone at 28 d: AFm %d, monocarbonate %d voxels: want monosulfate only", plain.Count(kinetics.AFm), plain.Count(kinetics.Monocarbonate))
	}
}

// TestWaterAndSpace: hydration slows as the water-filled capillary space
// shrinks and as sealed pastes lose water (Powers; Taylor, Cement
// Chemistry 1997, from memory): a saturated w/c 0.30 paste stays well below
// Powers' space limit (about 0.84) at 28 d, at about 0.6–0.7; sealed curing
// at w/c 0.35 ends at least 0.05 below saturated at 28 d; late α rises
// with w/c.
func TestWaterAndSpace(t *testing.T) {
	at28 := func(wc float64, sealed bool) float64 {
		e := newTestEngine(t, mixPaste(t, rwgMix, 50, 1, wc, 34), 20, sealed, 8)
		runTo(t, e, []float64{672})
		return e.Alpha()
	}
	a30 := at28(0.30, false)
	if a30 < 0.58 || a30 > 0.72 {
		t.Errorf("saturated w/c 0.30: α(28 d) = %.3f, want about 0.6–0.7 (band 0.58–0.72)", a30)
	}
	sat, seal := at28(0.35, false), at28(0.35, true)
	if sat-seal < 0.05 {
		t.Errorf("w/c 0.35 at 28 d: saturated α %.3f, sealed %.3f: want sealed at least 0.05 below", sat, seal)
	}
	a60 := at28(0.60, false)
	if !(a60 > sat+0.05 && sat > a30) {
		t.Errorf("α(28 d) at w/c 0.30, 0.35, 0.60: %.3f, %.3f, %.3f: want rising with w/c, by > 0.05 from 0.35 to 0.60", a30, sat, a60)
	}
	t.Logf("α(28 d): w/c 0.30 %.3f; w/c 0.35 saturated %.3f, sealed %.3f; w/c 0.60 %.3f", a30, sat, seal, a60)
}

// TestCrossover: at 35 °C hydration is faster early but ends equal or lower
// at 28 d than at 20 °C (the crossover effect: Verbeck & Helmuth 1968;
// Kjellsen & Detwiler, Cem. Concr. Res. 22 (1992), from memory).
func TestCrossover(t *testing.T) {
	run := func(tempC float64) (a1, a28 float64) {
		e := newTestEngine(t, mixPaste(t, rwgMix, 50, 1, 0.5, 35), tempC, false, 9)
		s := runTo(t, e, []float64{24, 672})
		return s[0].alpha, s[1].alpha
	}
	a1w, a28w := run(35)
	a1, a28 := run(20)
	t.Logf("α(1 d): 20 °C %.3f, 35 °C %.3f; α(28 d): 20 °C %.3f, 35 °C %.3f", a1, a1w, a28, a28w)
	if !(a1w > a1+0.05) {
		t.Errorf("α(1 d) at 35 °C %.3f, at 20 °C %.3f: want clearly higher at 35 °C", a1w, a1)
	}
	if a28w > a28+0.01 {
		t.Errorf("α(28 d) at 35 °C %.3f, at 20 °C %.3f: want equal or lower at 35 °C", a28w, a28)
	}
}

// Per-phase bands at w/c 0.5, 20 °C for a general-use Portland cement
// (Taylor, Cement Chemistry 1997, ch. 7, from memory): alite 0.4–0.6 at
// 1 d and 0.8–0.92 at 28 d; belite 0.3–0.5 at 28 d; aluminate 0.3–0.6 at
// 1 d and 0.8–0.92 at 28 d; ferrite 0.5–0.7 at 28 d.
var phaseBands = []struct {
	id     int // index in clinkerIDs
	hour   float64
	lo, hi float64
}{
	{0, 24, 0.4, 0.6}, {0, 672, 0.8, 0.92}, {1, 672, 0.3, 0.5},
	{2, 24, 0.3, 0.6}, {2, 672, 0.8, 0.92}, {3, 672, 0.5, 0.7},
}

// TestPhaseBands holds the per-phase degrees of hydration, the kinetic
// stages (dormant minimum at 1–3 h, main peak at 7–12 h; typical Portland
// cement at 20 °C, common practice, from memory) and the 3- and 7-day heats
// of the default cement. The heat bands are those of a general-use (ASTM
// C150 Type I) cement, which has no heat limit of its own: 3 d 200–320 J/g,
// 7 d 250–380 J/g (typical Type I values, Taylor 1997 ch. 7, from memory;
// a moderate-heat cement must stay ≤ 290 J/g at 7 d, ASTM C150 Table 4,
// confirmed). The fast run uses a 60³ box with a tolerance of 0.02 on the
// bands for its smaller grains; the long run checks the 100³ default box.
func TestPhaseBands(t *testing.T) {
	n, tol := 60, 0.02
	if os.Getenv("GELSPACE_LONG") != "" {
		n, tol = 100, 0
	}
	e := newTestEngine(t, mixPaste(t, rwgMix, n, 1, 0.5, 36), 20, false, 10)
	c := sampleRun(t, e, 672, 24, 72, 168, 672)
	for _, b := range phaseBands {
		a := c.phaseAlpha[b.hour][b.id]
		if a < b.lo-tol || a > b.hi+tol {
			t.Errorf("%s α at %g h = %.3f, want %.2f–%.2f", kinetics.Lookup(clinkerIDs[b.id]).Key, b.hour, a, b.lo, b.hi)
		}
	}
	for _, h := range []float64{24, 168, 672} {
		pa := c.phaseAlpha[h]
		t.Logf("%4g h: α %.3f; C3S %.3f C2S %.3f C3A %.3f C4AF %.3f", h, c.alpha[h], pa[0], pa[1], pa[2], pa[3])
	}
	s := c.smoothed(2)
	pkH, pkF := s.peak(2, 30)
	minH, minF := math.NaN(), math.Inf(1)
	for k, h := range s.timeH {
		if h >= 0.5 && h < pkH && s.flow[k] < minF {
			minH, minF = h, s.flow[k]
		}
	}
	t.Logf("dormant minimum %.2f mW/g at %.2f h, main peak %.2f mW/g at %.2f h, gypsum used up at %.2f h", minF, minH, pkF, pkH, c.gypsumGoneH)
	if pkH < 7 || pkH > 12 {
		t.Errorf("main peak at %.2f h, want 7–12 h", pkH)
	}
	if minH < 0.75 || minH > 3.5 || !(minF < 0.4*pkF) {
		t.Errorf("dormant minimum %.2f mW/g at %.2f h (peak %.2f): want a minimum well below the peak at about 1–3 h", minF, minH, pkF)
	}
	q3, q7 := c.heat[int(72/0.25)-1], c.heat[int(168/0.25)-1]
	t.Logf("heat: 3 d %.1f J/g, 7 d %.1f J/g", q3, q7)
	if q3 < 200 || q3 > 320 || q7 < 250 || q7 > 380 {
		t.Errorf("heat 3 d %.1f J/g, 7 d %.1f J/g: want 200–320 and 250–380", q3, q7)
	}
}

// TestApparentActivationEnergyLong: the apparent activation energy read
// from the main peak times at 20 and 35 °C (and 10 and 20 °C) lies within
// 35–50 kJ/mol (ASTM C1074 guidance gives 40–45 kJ/mol for a general-use
// cement; Freiesleben Hansen & Pedersen 1977 use 33.5 kJ/mol above 20 °C —
// both from memory). 100³ default box; also reports the peak times.
func TestApparentActivationEnergyLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long validation study; set GELSPACE_LONG=1")
	}
	peakAt := map[float64]float64{}
	for _, tc := range []float64{10, 20, 35} {
		e := newTestEngine(t, mixPaste(t, rwgMix, 100, 1, 0.5, 37), tc, false, 11)
		c := sampleRun(t, e, 48)
		s := c.smoothed(2)
		peakAt[tc], _ = s.peak(1.5, 40)
		t.Logf("%g °C: main peak at %.2f h, gypsum used up at %.2f h", tc, peakAt[tc], c.gypsumGoneH)
	}
	for _, pair := range [][2]float64{{20, 35}, {10, 20}} {
		lo, hi := pair[0]+273.15, pair[1]+273.15
		ea := kinetics.GasConstant * math.Log(peakAt[pair[0]]/peakAt[pair[1]]) / (1/lo - 1/hi) / 1000
		t.Logf("apparent Ea %g–%g °C: %.1f kJ/mol", pair[0], pair[1], ea)
		if ea < 35 || ea > 50 {
			t.Errorf("apparent activation energy %g–%g °C from the main peak: %.1f kJ/mol, want 35–50", pair[0], pair[1], ea)
		}
	}
}

// TestSeedSpreadLong reports the seed-to-seed spread of α(1 d) and of the
// gypsum-exhaustion time over 5 seeds on the 100³ default box (packing and
// engine seeds both vary), and holds α(1 d) within ±0.02 of the mean.
func TestSeedSpreadLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long validation study; set GELSPACE_LONG=1")
	}
	var alphas, gone []float64
	for seed := uint64(1); seed <= 5; seed++ {
		e := newTestEngine(t, mixPaste(t, rwgMix, 100, 1, 0.45, 40+seed), 20, false, seed)
		c := sampleRun(t, e, 40, 24)
		alphas = append(alphas, c.alpha[24])
		gone = append(gone, c.gypsumGoneH)
	}
	mean := func(v []float64) float64 {
		var s float64
		for _, x := range v {
			s += x
		}
		return s / float64(len(v))
	}
	ma, mg := mean(alphas), mean(gone)
	t.Logf("α(1 d) over 5 seeds: %.3f (mean %.3f); gypsum used up at %.2f h (mean %.2f h)", alphas, ma, gone, mg)
	for _, a := range alphas {
		if math.Abs(a-ma) > 0.02 {
			t.Errorf("α(1 d) %.3f is more than 0.02 from the mean %.3f", a, ma)
		}
	}
}
