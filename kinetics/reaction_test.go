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
