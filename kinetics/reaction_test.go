package kinetics

import (
	"math"
	"testing"
)

// Each reaction must balance by mass with the phase table's molar masses
// (textbook forms, Taylor 1997 and Mindess & Young, from memory; the balance itself
// is exact arithmetic, tolerance 0.1 % for rounding of the tabled masses).
func TestReactionsBalanceByMass(t *testing.T) {
	for _, r := range Reactions() {
		in := r.PrimaryMol*Lookup(r.Primary).MolarMassGPerMol + r.WaterMol*WaterMolarMass
		for _, c := range r.Co {
			in += c.Mol * Lookup(c.Phase).MolarMassGPerMol
		}
		var out float64
		for _, p := range r.Products {
			out += p.Mol * Lookup(p.Phase).MolarMassGPerMol
		}
		if rel := math.Abs(in-out) / in; rel > 1e-3 {
			t.Errorf("%s (%s): reactants %.2f g, products %.2f g, off by %.3f %%", r.Key, r.Formula, in, out, 100*rel)
		}
	}
}

// C3S hydration: products occupy about twice the volume of the C3S reacted
// (common practice: solid volume roughly doubles), and chemical shrinkage per
// gram is near the 0.07 mL/g used in published modelling (
// confirmed as a modelling value; wide band).
func TestC3SVolumes(t *testing.T) {
	r := ReactionByKey(RxC3S)
	prod := r.VoxelsPerVoxel(CSHOuter) + r.VoxelsPerVoxel(CH)
	if prod < 1.9 || prod > 2.3 {
		t.Errorf("products per volume of C3S = %.3f, want about 2.1", prod)
	}
	shrinkMLPerG := r.ChemicalShrinkage() / Lookup(C3S).DensityGPerCM3
	if shrinkMLPerG < 0.05 || shrinkMLPerG > 0.09 {
		t.Errorf("chemical shrinkage of C3S = %.4f mL/g, want 0.05–0.09", shrinkMLPerG)
	}
}

// oxideMoles gives the formula of each phase in oxide units per mole (C,
// S, A, F, M, S̄, C̄, H), from the formulas written beside the phase table
// (cement chemist notation).
var oxideMoles = map[ID][8]float64{
	//        C    S    A     F  M    S̄  C̄   H
	C3S:          {3, 1, 0, 0, 0, 0, 0, 0},
	C2S:          {2, 1, 0, 0, 0, 0, 0, 0},
	CSHInner:     {1.7, 1, 0, 0, 0, 0, 0, 4},
	CSHOuter:     {1.7, 1, 0, 0, 0, 0, 0, 4},
	CH:           {1, 0, 0, 0, 0, 0, 0, 1},
	SilicaFume:   {0, 1, 0, 0, 0, 0, 0, 0},
	FlyAsh:       {0.1, 1, 0.25, 0, 0, 0, 0, 0},
	Slag:         {1.2, 1, 0.16, 0, 0.4, 0, 0, 0},
	Metakaolin:   {0, 2, 1, 0, 0, 0, 0, 0},
	CSHLowCa:     {1.1, 1, 0, 0, 0, 0, 0, 3.4},
	Stratlingite: {2, 1, 1, 0, 0, 0, 0, 8},
	Hydrotalcite: {0, 0, 1, 0, 4, 0, 0, 10},
	Water:        {0, 0, 0, 0, 0, 0, 0, 1},
}

// The reactions of the supplementary cementitious materials balance by
// element (Ca, Si, Al, Mg and water, as oxides), not only by mass: exact
// arithmetic on the formulas of the phase table.
func TestSCMReactionsBalanceByOxide(t *testing.T) {
	names := [8]string{"CaO", "SiO2", "Al2O3", "Fe2O3", "MgO", "SO3", "CO2", "H2O"}
	for _, key := range []string{RxSilicaFume, RxFlyAsh, RxSlag, RxMetakaolin, RxC3S, RxC2S} {
		r := ReactionByKey(key)
		var bal [8]float64
		add := func(id ID, mol float64) {
			f, ok := oxideMoles[id]
			if !ok {
				t.Fatalf("%s: no formula for %s", key, Lookup(id).Key)
			}
			for k := range bal {
				bal[k] += mol * f[k]
			}
		}
		add(r.Primary, r.PrimaryMol)
		add(Water, r.WaterMol)
		for _, c := range r.Co {
			add(c.Phase, c.Mol)
		}
		for _, p := range r.Products {
			add(p.Phase, -p.Mol)
		}
		for k, v := range bal {
			if math.Abs(v) > 1e-9 {
				t.Errorf("%s (%s): %s off by %.4g mol", key, r.Formula, names[k], v)
			}
		}
	}
}

// The molar masses of the new phases follow from their formulas (oxide
// molar masses CaO 56.077, SiO2 60.084, Al2O3 101.96, MgO 40.304, H2O
// 18.015 g/mol; compiled standard values).
func TestSCMMolarMassesFromFormulas(t *testing.T) {
	ox := [8]float64{56.077, 60.084, 101.96, 159.69, 40.304, 80.06, 44.01, 18.015}
	for _, id := range []ID{SilicaFume, FlyAsh, Slag, Metakaolin, CSHLowCa, Stratlingite, Hydrotalcite} {
		m := 0.0
		for k, n := range oxideMoles[id] {
			m += n * ox[k]
		}
		if got := Lookup(id).MolarMassGPerMol; math.Abs(got-m)/m > 2e-4 {
			t.Errorf("%s: molar mass %.3f g/mol, formula gives %.3f", Lookup(id).Key, got, m)
		}
	}
}

// Silica fume binds about 1.4 g of CH per gram (1.1 mol CH per mol SiO2)
// and the pozzolanic reaction shrinks (products less than reactants with
// water); a 1 g/g order of CH fixed by silica fume is common practice
// (lime-consumption tests of very active pozzolans; wide band).
func TestSilicaFumeCHConsumption(t *testing.T) {
	r := ReactionByKey(RxSilicaFume)
	g := r.Co[0].Mol * Lookup(CH).MolarMassGPerMol / Lookup(SilicaFume).MolarMassGPerMol
	if g < 0.9 || g > 2.0 {
		t.Errorf("CH bound per g of silica fume = %.2f g, want 0.9–2.0", g)
	}
	if s := r.ChemicalShrinkage(); !(s > 0) {
		t.Errorf("chemical shrinkage of the silica-fume reaction = %.3f, want > 0", s)
	}
	if PrimaryReaction(SilicaFume) != RxSilicaFume || PrimaryReaction(C3A) != "" {
		t.Errorf("PrimaryReaction: silica fume %q, C3A %q", PrimaryReaction(SilicaFume), PrimaryReaction(C3A))
	}
}
