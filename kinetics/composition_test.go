package kinetics

import (
	"math"
	"strings"
	"testing"
)

func TestBogueWorkedExample(t *testing.T) {
	// Worked example (Bogue, ASTM C150 Annex A1 —
	// confirmed equations; the figures are computed with them, "derived"):
	// SiO2 20.6, Al2O3 5.07, Fe2O3 2.90, CaO 63.9, SO3 2.53 →
	// C3S 58.1, C2S 15.2, C3A 8.5, C4AF 8.8, to ±0.2 percentage points.
	o := Oxides{SiO2: 20.6, Al2O3: 5.07, Fe2O3: 2.90, CaO: 63.9, SO3: 2.53}
	b, err := Bogue(o)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 0.2
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"C3S", b.C3S, 58.1}, {"C2S", b.C2S, 15.2}, {"C3A", b.C3A, 8.5}, {"C4AF", b.C4AF, 8.8}} {
		if math.Abs(c.got-c.want) > tol {
			t.Errorf("%s = %.2f, want %.1f ± %g", c.name, c.got, c.want, tol)
		}
	}
	if b.SS {
		t.Error("A/F = 1.75 took the ferrite solid-solution branch")
	}
}

func TestBogueLowAF(t *testing.T) {
	// A/F < 0.64 branch of ASTM C150 Annex A1 (confirmed equations):
	// C3A = 0 and ss(C4AF + C2F) = 2.100A + 1.702F. Values derived by hand
	// from the equations for this invented analysis (A/F = 0.6).
	o := Oxides{SiO2: 21.5, Al2O3: 3.0, Fe2O3: 5.0, CaO: 64.0, SO3: 2.2, FreeCaO: 0.8}
	b, err := Bogue(o)
	if err != nil {
		t.Fatal(err)
	}
	C := 64.0 - 0.8
	wantC3S := 4.071*C - 7.600*21.5 - 4.479*3.0 - 2.859*5.0 - 2.852*2.2 // 59.88
	if !b.SS || b.C3A != 0 {
		t.Fatalf("low A/F: SS=%v C3A=%g, want the solid-solution branch with C3A = 0", b.SS, b.C3A)
	}
	if math.Abs(b.C4AF-(2.100*3+1.702*5)) > 1e-9 || math.Abs(b.C4AF-14.81) > 0.01 {
		t.Errorf("ss = %.3f, want 14.81", b.C4AF)
	}
	if math.Abs(b.C3S-wantC3S) > 1e-9 || math.Abs(b.C3S-59.88) > 0.01 {
		t.Errorf("C3S = %.3f, want 59.88", b.C3S)
	}
	if math.Abs(b.C2S-(2.867*21.5-0.7544*wantC3S)) > 1e-9 {
		t.Errorf("C2S = %.3f", b.C2S)
	}
	// Free lime is subtracted from CaO: without it C3S rises by 4.071 × 0.8.
	o.FreeCaO = 0
	b2, _ := Bogue(o)
	if math.Abs(b2.C3S-b.C3S-4.071*0.8) > 1e-9 {
		t.Errorf("free lime: C3S %.3f → %.3f, want a rise of %.3f", b.C3S, b2.C3S, 4.071*0.8)
	}
}

func TestBogueNegative(t *testing.T) {
	// Too much lime for the silica: C2S comes out negative.
	_, err := Bogue(Oxides{SiO2: 17, Al2O3: 4, Fe2O3: 3, CaO: 70, SO3: 2})
	if err == nil || !strings.Contains(err.Error(), "C2S") || !strings.Contains(err.Error(), "negative") {
		t.Fatalf("got %v, want a negative-C2S error", err)
	}
	// Too little lime: C3S negative.
	_, err = Bogue(Oxides{SiO2: 25, Al2O3: 5, Fe2O3: 3, CaO: 55, SO3: 2})
	if err == nil || !strings.Contains(err.Error(), "C3S") {
		t.Fatalf("got %v, want a negative-C3S error", err)
	}
}

func TestSulfateCarrier(t *testing.T) {
	// Stoichiometry (derived): 1 % SO3 as gypsum is 172.17/80.06 = 2.150 %.
	m := SulfateSplit{}.CarrierMassPercent(1)
	if math.Abs(m[Gypsum]-2.1505) > 1e-3 || len(m) != 1 {
		t.Fatalf("default split: %v, want all gypsum 2.150", m)
	}
	s, err := SulfateSplitFromMap(map[string]float64{"gypsum": 0.5, "hemihydrate": 0.5})
	if err != nil {
		t.Fatal(err)
	}
	m = s.CarrierMassPercent(2)
	if math.Abs(m[Gypsum]-2.1505) > 1e-3 || math.Abs(m[Hemihydrate]-145.15/80.06) > 1e-3 {
		t.Fatalf("half split: %v", m)
	}
	if _, err := SulfateSplitFromMap(map[string]float64{"gypsum": 0.5}); err == nil {
		t.Fatal("split summing to 0.5 accepted")
	}
	if _, err := SulfateSplitFromMap(map[string]float64{"plaster": 1}); err == nil {
		t.Fatal("unknown carrier accepted")
	}
}

func TestCompositionFromOxides(t *testing.T) {
	o := Oxides{SiO2: 20.6, Al2O3: 5.07, Fe2O3: 2.90, CaO: 63.9, SO3: 2.53}
	c, b, err := CompositionFromOxides(o, SulfateSplit{})
	if err != nil {
		t.Fatal(err)
	}
	sum := b.C3S + b.C2S + b.C3A + b.C4AF + 2.53*172.17/80.06
	if math.Abs(c.Mass(C3S)-b.C3S/sum) > 1e-12 || math.Abs(c.Mass(Gypsum)-2.53*172.17/80.06/sum) > 1e-12 {
		t.Fatalf("normalisation: C3S %g gypsum %g", c.Mass(C3S), c.Mass(Gypsum))
	}
	total := 0.0
	for _, m := range c.MassFrac {
		total += m
	}
	if math.Abs(total-1) > 1e-12 {
		t.Fatalf("mass fractions sum to %g", total)
	}
}

func TestFreshPasteVolumes(t *testing.T) {
	// Common practice (derived (1/3)/(1/3 + 0.5) = 0.40):
	// at w/c 0.5 a cement of relative density 3.0 is about 40 % of the
	// fresh paste by volume. Inert filler is given density 3.0 here by
	// mixing phases: build a powder whose density is exactly 3.0.
	var vol [NumIDs]float64
	// C3S 3.15 and gypsum 2.32: volume share f of C3S with f·3.15 + (1−f)·2.32 = 3.0.
	f := (3.0 - 2.32) / (3.15 - 2.32)
	vol[C3S], vol[Gypsum] = f, 1-f
	c, err := FromVolumeFractions(vol)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(c.DensityGPerCM3()-3.0) > 1e-12 {
		t.Fatalf("density %g, want 3.0", c.DensityGPerCM3())
	}
	phi := c.SolidVolumeFraction(0.5)
	if math.Abs(phi-0.40) > 0.002 { // ρw = 0.998 rather than 1 moves it by 0.0002
		t.Errorf("solid fraction at w/c 0.5, ρc 3.0: %.4f, want 0.40", phi)
	}
	// With the table's densities: φ = (1/ρc)/(1/ρc + w/c) (ρw ≈ 1, derived).
	c2, err := NewComposition(map[string]float64{"c3s": 58, "c2s": 17, "c3a": 7.5, "c4af": 10.5, "gypsum": 5})
	if err != nil {
		t.Fatal(err)
	}
	rho := c2.DensityGPerCM3()
	for _, wc := range []float64{0.3, 0.45, 0.6} {
		want := (1 / rho) / (1/rho + wc)
		if got := c2.SolidVolumeFraction(wc); math.Abs(got-want) > 0.002 {
			t.Errorf("w/c %g: φ %.4f, want %.4f", wc, got, want)
		}
		exact := (1 / rho) / (1/rho + wc/WaterDensity)
		if got := c2.SolidVolumeFraction(wc); math.Abs(got-exact) > 1e-12 {
			t.Errorf("w/c %g: φ %.6f, want %.6f", wc, got, exact)
		}
	}
	// Mass ↔ volume round trip.
	back, err := FromVolumeFractions(c2.VolumeFractions())
	if err != nil {
		t.Fatal(err)
	}
	for id := range back.MassFrac {
		if math.Abs(back.MassFrac[id]-c2.MassFrac[id]) > 1e-12 {
			t.Fatalf("round trip id %d: %g vs %g", id, back.MassFrac[id], c2.MassFrac[id])
		}
	}
	pv := c2.PasteVolumeFractions(0.45)
	s := 0.0
	for _, v := range pv {
		s += v
	}
	if math.Abs(s-1) > 1e-12 {
		t.Fatalf("paste volume fractions sum to %g", s)
	}
}

func TestNewCompositionErrors(t *testing.T) {
	for _, m := range []map[string]float64{
		{"c3s": 50, "c2s": 20},           // sums to 70
		{"c3s": 110},                     // over 100
		{"c3s": 101, "c2s": -1},          // negative
		{"c3s": 60, "alite": 40},         // unknown key
		{"c3s": 60, "csh_inner": 40},     // hydrate is not a powder phase
		{"c3s": 90, "c2s": math.NaN()},   // NaN
		{"c3s": 58, "c2s": 17, "c3a": 5}, // 80
	} {
		if _, err := NewComposition(m); err == nil {
			t.Errorf("%v accepted", m)
		}
	}
}

func TestOxidesFromMap(t *testing.T) {
	good := map[string]float64{"cao": 64, "sio2": 20.5, "al2o3": 5.1, "fe2o3": 3, "so3": 2.6, "free_cao": 1}
	if _, err := OxidesFromMap(good); err != nil {
		t.Fatal(err)
	}
	for _, bad := range []map[string]float64{
		{"cao": 64, "sio2": 20.5, "al2o3": 5.1, "fe2o3": 3},                   // no so3
		{"cao": 64, "sio2": 20.5, "al2o3": 5.1, "fe2o3": 3, "so3": 2, "x": 1}, // unknown
		{"cao": 64, "sio2": 40, "al2o3": 5.1, "fe2o3": 3, "so3": 2},           // sum > 101
		{"cao": 64, "sio2": 20, "al2o3": -5, "fe2o3": 3, "so3": 2},            // negative
		{"cao": 1, "sio2": 20, "al2o3": 5, "fe2o3": 3, "so3": 2, "free_cao": 2},
	} {
		if _, err := OxidesFromMap(bad); err == nil {
			t.Errorf("%v accepted", bad)
		}
	}
}
