package render

import (
	"fmt"
	"image/color"
	"math"
	"testing"

	"gelspace/kinetics"
)

// srgbToLinear and linearToLab give CIELAB (D65) coordinates for the
// colour-distance checks.
func srgbToLinear(c uint8) float64 {
	v := float64(c) / 255
	if v <= 0.04045 {
		return v / 12.92
	}
	return math.Pow((v+0.055)/1.055, 2.4)
}

func linearToLab(r, g, b float64) [3]float64 {
	x := 0.4124*r + 0.3576*g + 0.1805*b
	y := 0.2126*r + 0.7152*g + 0.0722*b
	z := 0.0193*r + 0.1192*g + 0.9505*b
	f := func(t float64) float64 {
		if t > 0.008856 {
			return math.Cbrt(t)
		}
		return 7.787*t + 16.0/116
	}
	fx, fy, fz := f(x/0.95047), f(y), f(z/1.08883)
	return [3]float64{116*fy - 16, 500 * (fx - fy), 200 * (fy - fz)}
}

// Dichromat simulation matrices in linear RGB, Viénot, Brettel & Mollon,
// Color Res. Appl. 24 (1999) 243 — from memory (not in REFERENCES.md); used
// only as a screening check of the palette.
var visions = []struct {
	name string
	m    [9]float64
}{
	{"normal", [9]float64{1, 0, 0, 0, 1, 0, 0, 0, 1}},
	{"protanopia", [9]float64{0.11238, 0.88762, 0, 0.11238, 0.88762, 0, 0.00401, -0.00401, 1}},
	{"deuteranopia", [9]float64{0.29275, 0.70725, 0, 0.29275, 0.70725, 0, -0.02234, 0.02234, 1}},
}

func seenAs(c color.RGBA, m [9]float64) [3]float64 {
	r, g, b := srgbToLinear(c.R), srgbToLinear(c.G), srgbToLinear(c.B)
	return linearToLab(m[0]*r+m[1]*g+m[2]*b, m[3]*r+m[4]*g+m[5]*b, m[6]*r+m[7]*g+m[8]*b)
}

// minLabDistance is the smallest CIELAB ΔE*ab the palette keeps between any
// two phases, for each vision model.
const minLabDistance = 25

func TestPaletteDistinct(t *testing.T) {
	ps := kinetics.Phases()
	for i := range ps {
		for j := i + 1; j < len(ps); j++ {
			a, b := ps[i].Colour, ps[j].Colour
			if d := rgbDist(a, b); d < MinColourDistance {
				t.Errorf("%s and %s colours %v, %v are %.1f apart in RGB; want ≥ %d", ps[i].Key, ps[j].Key, a, b, d, MinColourDistance)
			}
			for _, v := range visions {
				la, lb := seenAs(a, v.m), seenAs(b, v.m)
				d := math.Sqrt((la[0]-lb[0])*(la[0]-lb[0]) + (la[1]-lb[1])*(la[1]-lb[1]) + (la[2]-lb[2])*(la[2]-lb[2]))
				if d < minLabDistance {
					t.Errorf("%s and %s are ΔE %.1f apart under %s; want ≥ %d", ps[i].Key, ps[j].Key, d, v.name, minLabDistance)
				}
			}
		}
	}
}

func TestEveryPhaseHasLegendEntry(t *testing.T) {
	var c counts
	ids := legendIDs(&c, true)
	if len(ids) != len(kinetics.Phases()) {
		t.Fatalf("legend with all phases lists %d ids; table has %d", len(ids), len(kinetics.Phases()))
	}
	for i, p := range kinetics.Phases() {
		if ids[i] != p.ID {
			t.Errorf("legend entry %d is id %d; want %d (%s)", i, ids[i], p.ID, p.Key)
		}
		if l := PhaseLabel(p.ID); l == "" || l != p.Name {
			t.Errorf("phase %s label %q; want %q", p.Key, l, p.Name)
		}
	}
	// Only present phases by default, unknown ids after the table ones.
	c[kinetics.CH], c[77], c[kinetics.Water] = 3, 1, 5
	got := fmt.Sprint(legendIDs(&c, false))
	if want := fmt.Sprint([]uint8{kinetics.Water, kinetics.CH, 77}); got != want {
		t.Errorf("legend ids %s; want %s", got, want)
	}
	if l := PhaseLabel(77); l != "id 77" {
		t.Errorf("unknown id label %q; want \"id 77\"", l)
	}
}

func TestFallbackColoursDistinct(t *testing.T) {
	seen := map[color.RGBA]uint8{}
	for id := 0; id < 256; id++ {
		if kinetics.Lookup(uint8(id)) != nil {
			continue
		}
		c := FallbackColour(uint8(id))
		for _, p := range kinetics.Phases() {
			if d := rgbDist(c, p.Colour); d < MinColourDistance {
				t.Errorf("fallback colour of id %d %v is %.1f from %s; want ≥ %d", id, c, d, p.Key, MinColourDistance)
			}
		}
		if prev, ok := seen[c]; ok && id < 100 {
			t.Errorf("ids %d and %d share fallback colour %v", prev, id, c)
		}
		seen[c] = uint8(id)
	}
}

// meanZ returns the mass-weighted mean atomic number of a formula given as
// element → atoms per formula unit.
func meanZ(f map[string]float64) float64 {
	// Standard atomic weights (IUPAC, abridged) — common practice.
	el := map[string]struct{ z, m float64 }{
		"H": {1, 1.008}, "C": {6, 12.011}, "O": {8, 15.999}, "Al": {13, 26.982}, "Si": {14, 28.085},
		"S": {16, 32.06}, "Ca": {20, 40.078}, "Fe": {26, 55.845},
	}
	var zm, m float64
	for e, n := range f {
		zm += n * el[e].m * el[e].z
		m += n * el[e].m
	}
	return zm / m
}

func TestMeanZFromFormulas(t *testing.T) {
	// Formulas in cement chemist notation expanded to elements (derived).
	cases := []struct {
		id      uint8
		formula map[string]float64
		tol     float64
	}{
		{kinetics.C3S, map[string]float64{"Ca": 3, "Si": 1, "O": 5}, 0.02},            // Ca3SiO5
		{kinetics.C2S, map[string]float64{"Ca": 2, "Si": 1, "O": 4}, 0.02},            // Ca2SiO4
		{kinetics.C3A, map[string]float64{"Ca": 3, "Al": 2, "O": 6}, 0.02},            // Ca3Al2O6
		{kinetics.CH, map[string]float64{"Ca": 1, "O": 2, "H": 2}, 0.02},              // Ca(OH)2
		{kinetics.Gypsum, map[string]float64{"Ca": 1, "S": 1, "O": 6, "H": 4}, 0.02},  // CaSO4·2H2O
		{kinetics.Calcite, map[string]float64{"Ca": 1, "C": 1, "O": 3}, 0.02},         // CaCO3
		{kinetics.C4AF, map[string]float64{"Ca": 4, "Al": 2, "Fe": 2, "O": 10}, 0.02}, // Ca4Al2Fe2O10
	}
	for _, c := range cases {
		p := kinetics.Lookup(c.id)
		if z := meanZ(c.formula); math.Abs(z-p.MeanZ) > c.tol {
			t.Errorf("%s: mean Z from formula %.3f, table %.3f; want within %g", p.Key, z, p.MeanZ, c.tol)
		}
	}
	// The order BSE images show: C3S > CH > C-S-H, computed from the
	// formulas (C-S-H as C1.7SH4, REFERENCES.md) — derived.
	zC3S := meanZ(map[string]float64{"Ca": 3, "Si": 1, "O": 5})
	zCH := meanZ(map[string]float64{"Ca": 1, "O": 2, "H": 2})
	zCSH := meanZ(map[string]float64{"Ca": 1.7, "Si": 1, "O": 1.7 + 2 + 4, "H": 8})
	if !(zC3S > zCH && zCH > zCSH) {
		t.Errorf("mean Z C3S %.2f, CH %.2f, C-S-H %.2f: want C3S > CH > C-S-H", zC3S, zCH, zCSH)
	}
	if got := kinetics.Lookup(kinetics.CSHInner).MeanZ; math.Abs(zCSH-got) > 0.02 {
		t.Errorf("C-S-H: mean Z from C1.7SH4 %.3f, table %.3f", zCSH, got)
	}
}

func TestGreyOrder(t *testing.T) {
	g := func(id uint8) uint8 { return Grey(kinetics.Lookup(id)) }
	minClinker := uint8(255)
	for _, p := range kinetics.Phases() {
		if p.Role == kinetics.RoleClinker {
			minClinker = min(minClinker, Grey(&p))
		}
	}
	if !(minClinker > g(kinetics.CH)) {
		t.Errorf("darkest clinker grey %d, CH %d: want clinker brighter", minClinker, g(kinetics.CH))
	}
	for _, csh := range []uint8{kinetics.CSHInner, kinetics.CSHOuter} {
		if !(g(kinetics.CH) > g(csh)) || !(g(csh) > 0) {
			t.Errorf("CH grey %d, C-S-H grey %d: want CH > C-S-H > 0", g(kinetics.CH), g(csh))
		}
	}
	if g(kinetics.Water) != 0 || g(kinetics.Empty) != 0 {
		t.Errorf("pore greys %d, %d: want black", g(kinetics.Water), g(kinetics.Empty))
	}
	// Monotone in mean Z over all solids.
	ps := kinetics.Phases()
	for i := range ps {
		for j := range ps {
			if ps[i].Role != kinetics.RolePore && ps[j].Role != kinetics.RolePore && ps[i].MeanZ > ps[j].MeanZ && Grey(&ps[i]) < Grey(&ps[j]) {
				t.Errorf("%s (Z %.2f) grey %d darker than %s (Z %.2f) grey %d", ps[i].Key, ps[i].MeanZ, Grey(&ps[i]), ps[j].Key, ps[j].MeanZ, Grey(&ps[j]))
			}
		}
	}
}
