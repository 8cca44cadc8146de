package kinetics

import (
	"math"
	"testing"
)

// The sulfate retardation law is smooth and monotone in the sulfate
// available: g = f while the solution is well supplied, g → 1 as it is
// drained, never a step (the law replaces a switch on "any solid sulfate
// left"; Taylor, Cement Chemistry 1997, §7.5, from memory, for sulfate
// retarding the aluminates).
func TestSulfateRetardationLaw(t *testing.T) {
	p := DefaultParams()
	f := p.DissolutionOf(C3A).SulfateFactor
	if g := p.SulfateRetardation(f, 100); math.Abs(g-f) > 1e-3 {
		t.Errorf("well supplied (σ = 100): g = %.4f, want f = %.4f", g, f)
	}
	if g := p.SulfateRetardation(f, 0); g != 1 {
		t.Errorf("no sulfate: g = %.4f, want 1", g)
	}
	if g := p.SulfateRetardation(1, 0.1); g != 1 {
		t.Errorf("a phase without retardation: g = %.4f, want 1", g)
	}
	prev := 1.0
	const step = 0.001
	for s := step; s < 5; s += step {
		g := p.SulfateRetardation(f, s)
		if g > prev {
			t.Fatalf("g rises with σ at %.3f", s)
		}
		if prev-g > 0.01 {
			t.Fatalf("g jumps by %.4f between σ = %.3f and %.3f: not smooth", prev-g, s-step, s)
		}
		prev = g
	}
	// σ counts a saturated pool as 1.
	if s := p.SulfateAvailability(p.GypsumSolubilityMolPerL*2, 0, 2); math.Abs(s-1) > 1e-12 {
		t.Errorf("saturated pool: σ = %g, want 1", s)
	}
	if s := p.SulfateAvailability(1, 1, 0); s != 0 {
		t.Errorf("no water: σ = %g, want 0", s)
	}
}

// The water and space factor falls monotonically to 0 with the
// water-filled porosity, is ½ at φ½, and leaves a fresh paste (porosity
// about 0.5 and more) nearly unhindered.
func TestWaterFactor(t *testing.T) {
	p := DefaultParams()
	if f := p.WaterFactor(p.WaterHalfPorosity); math.Abs(f-0.5) > 1e-12 {
		t.Errorf("F(φ½) = %g, want 0.5", f)
	}
	if f := p.WaterFactor(0); f != 0 {
		t.Errorf("F(0) = %g, want 0", f)
	}
	if f := p.WaterFactor(0.5); f < 0.98 {
		t.Errorf("F(0.5) = %.3f: a fresh paste should be nearly unhindered", f)
	}
	prev := 0.0
	for phi := 0.01; phi <= 1; phi += 0.01 {
		f := p.WaterFactor(phi)
		if f < prev {
			t.Fatalf("F falls with φ at %.2f", phi)
		}
		prev = f
	}
}

// The through-product barrier tightens with temperature (denser product;
// Gallucci, Zhang & Scrivener, Cem. Concr. Res. 53 (2013), from memory)
// and is the tabled δ0 at 20 °C.
func TestProductLengthAt(t *testing.T) {
	p := DefaultParams()
	if d := p.ProductLengthAt(20); d != p.ProductLengthUM {
		t.Errorf("δ0(20 °C) = %g, want %g", d, p.ProductLengthUM)
	}
	if !(p.ProductLengthAt(35) < p.ProductLengthAt(20) && p.ProductLengthAt(20) < p.ProductLengthAt(10)) {
		t.Errorf("δ0 at 10, 20, 35 °C: %g, %g, %g: want falling", p.ProductLengthAt(10), p.ProductLengthAt(20), p.ProductLengthAt(35))
	}
	p.ProductDensifyK = 0
	if d := p.ProductLengthAt(60); d != p.ProductLengthUM {
		t.Errorf("with the densification off, δ0(60 °C) = %g", d)
	}
}

// Heats of the aluminate reactions are consistent by Hess's law: C3A →
// monosulfate directly (1144 J/g of C3A, Lerch & Bogue as given by Taylor
// 1997, from memory) equals one third via ettringite (1670 J/g) plus two
// thirds AFt → AFm.
func TestAluminateHeatsHess(t *testing.T) {
	aft, afm := ReactionByKey(RxC3AAFt).HeatJPerG, ReactionByKey(RxC3AAFm).HeatJPerG
	if direct := (aft + 2*afm) / 3; math.Abs(direct-1144) > 2 {
		t.Errorf("C3A → AFm via AFt: %.1f J/g of C3A, Lerch & Bogue direct 1144", direct)
	}
}

// Every aluminate sequence ends in a reaction without co-reactants, so an
// aluminate voxel can always react.
func TestSequencesEnd(t *testing.T) {
	for _, id := range []ID{C3A, C4AF} {
		seq := Sequence(id)
		if len(seq) == 0 {
			t.Fatalf("%s: no sequence", Lookup(id).Key)
		}
		for _, key := range seq {
			if r := ReactionByKey(key); r == nil || r.Primary != id {
				t.Errorf("%s: sequence names %q, not one of its reactions", Lookup(id).Key, key)
			}
		}
		if last := ReactionByKey(seq[len(seq)-1]); len(last.Co) != 0 {
			t.Errorf("%s: the last reaction %s needs co-reactants", Lookup(id).Key, last.Key)
		}
	}
}

// The carboaluminates and the other AFm/AFt phases have the molar volumes
// of Cemdata18 (Lothenbach et al., Cem. Concr. Res. 115 (2019) 472, read
// from a public transcription of its table): monocarbonate C4AC̄H11 262,
// hemicarbonate C4AC̄0.5H12 285, monosulfate C4AS̄H12 310, ettringite 707,
// C3AH6 150 cm³/mol, within 1 %.
func TestCemdataMolarVolumes(t *testing.T) {
	for _, c := range []struct {
		id ID
		vm float64
	}{{Monocarbonate, 262}, {Hemicarbonate, 285}, {AFm, 310}, {AFt, 707}, {Hydrogarnet, 150}} {
		if got := Lookup(c.id).MolarVolumeCM3(); math.Abs(got/c.vm-1) > 0.01 {
			t.Errorf("%s: molar volume %.1f cm³/mol, Cemdata18 %.0f", Lookup(c.id).Key, got, c.vm)
		}
	}
}
