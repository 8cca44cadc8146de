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
// Color Res. Appl. 24 (1999) 243 — from memory; used only as a screening
// check of the palette.
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

func deltaE(a, b [3]float64) float64 {
	return math.Sqrt((a[0]-b[0])*(a[0]-b[0]) + (a[1]-b[1])*(a[1]-b[1]) + (a[2]-b[2])*(a[2]-b[2]))
}

// lch returns CIELCh lightness, chroma and hue (degrees, 0–360) of c for
// normal vision.
func lch(c color.RGBA) (l, ch, h float64) {
	lab := seenAs(c, visions[0].m)
	h = math.Atan2(lab[2], lab[1]) * 180 / math.Pi
	if h < 0 {
		h += 360
	}
	return lab[0], math.Hypot(lab[1], lab[2]), h
}

// swatch is one colour of the palette under test: a table phase or a
// planned one.
type swatch struct {
	id  uint8
	key string
	c   color.RGBA
}

func paletteUnderTest(t *testing.T) []swatch {
	var out []swatch
	seen := map[uint8]string{}
	for _, p := range kinetics.Phases() {
		out = append(out, swatch{p.ID, p.Key, p.Colour})
		seen[p.ID] = p.Key
	}
	for _, p := range Planned() {
		if k, ok := seen[p.ID]; ok {
			t.Errorf("planned phase %s has id %d, already in the table as %s: drop it from Planned", p.Key, p.ID, k)
		}
		if p.ID == 0 || p.ID >= kinetics.NumIDs-56 {
			t.Errorf("planned phase %s: id %d outside the phase blocks", p.Key, p.ID)
		}
		out = append(out, swatch{p.ID, p.Key, p.Colour})
		seen[p.ID] = p.Key
	}
	return out
}

// The distance rule over the table and the planned phases together (see
// the palette comment in palette.go): RGB ≥ MinColourDistance for every
// pair; ΔE ≥ MinDeltaE for every pair under normal vision and for pairs of
// one group under protanopia and deuteranopia; ΔE ≥ MinCrossGroupDeltaE
// for pairs of different groups under the dichromat simulations.
func TestPaletteDistinct(t *testing.T) {
	ps := paletteUnderTest(t)
	if len(ps) < 27 {
		t.Errorf("palette under test has %d colours; want the table and the planned phases, ≥ 27", len(ps))
	}
	minWithin := make([]float64, len(visions))
	minAcross := make([]float64, len(visions))
	for v := range visions {
		minWithin[v], minAcross[v] = math.Inf(1), math.Inf(1)
	}
	for i := range ps {
		gi, ok := GroupOf(ps[i].id)
		if !ok {
			t.Fatalf("%s: id %d in no palette group", ps[i].key, ps[i].id)
		}
		for j := i + 1; j < len(ps); j++ {
			gj, _ := GroupOf(ps[j].id)
			a, b := ps[i].c, ps[j].c
			if d := rgbDist(a, b); d < MinColourDistance {
				t.Errorf("%s and %s colours %v, %v are %.1f apart in RGB; want ≥ %d", ps[i].key, ps[j].key, a, b, d, MinColourDistance)
			}
			for v, vis := range visions {
				d := deltaE(seenAs(a, vis.m), seenAs(b, vis.m))
				floor := float64(MinDeltaE)
				if gi == gj {
					minWithin[v] = math.Min(minWithin[v], d)
				} else {
					minAcross[v] = math.Min(minAcross[v], d)
					if v > 0 {
						floor = MinCrossGroupDeltaE
					}
				}
				if d < floor {
					t.Errorf("%s (%s) and %s (%s) are ΔE %.1f apart under %s; want ≥ %g", ps[i].key, gi, ps[j].key, gj, d, vis.name, floor)
				}
			}
		}
	}
	for v, vis := range visions {
		t.Logf("%-12s min ΔE within groups %.1f, across groups %.1f", vis.name, minWithin[v], minAcross[v])
	}
}

// Each colour keeps to its group's hue family, and the families do not
// share hues; C3S is a strong red (not a brown, tan or orange-brown) and CH
// a green (not a blue).
func TestPaletteFamilies(t *testing.T) {
	fam := Families()
	inHue := func(h float64, f Family) bool {
		if f.HueFrom <= f.HueTo {
			return h >= f.HueFrom && h <= f.HueTo
		}
		return h >= f.HueFrom || h <= f.HueTo
	}
	for _, p := range paletteUnderTest(t) {
		g, _ := GroupOf(p.id)
		f := fam[g]
		l, c, h := lch(p.c)
		if l < f.LMin || l > f.LMax || c < f.CMin || c > f.CMax || (f.HueFrom != f.HueTo && !inHue(h, f)) {
			t.Errorf("%s %v: L* %.0f C* %.0f h %.0f° outside the %s family %+v", p.key, p.c, l, c, h, g, f)
		}
	}
	// Hue ranges of the chromatic families are disjoint.
	for a := Group(0); a < numGroups; a++ {
		for b := a + 1; b < numGroups; b++ {
			fa, fb := fam[a], fam[b]
			if fa.HueFrom == fa.HueTo || fb.HueFrom == fb.HueTo {
				continue
			}
			if inHue(fb.HueFrom, fa) || inHue(fb.HueTo, fa) || inHue(fa.HueFrom, fb) {
				t.Errorf("hue families of %s %+v and %s %+v overlap", a, fa, b, fb)
			}
		}
	}
	// The achromatic families are apart in lightness or chroma from all.
	if fam[GroupPore].LMax >= fam[GroupFiller].LMin {
		t.Errorf("pores (L* ≤ %g) and fillers (L* ≥ %g) overlap in lightness", fam[GroupPore].LMax, fam[GroupFiller].LMin)
	}
	for g := Group(0); g < numGroups; g++ {
		if g != GroupFiller && g != GroupPore && fam[g].CMin <= fam[GroupFiller].CMax {
			t.Errorf("%s chroma from %g reaches the fillers' greys (≤ %g)", g, fam[g].CMin, fam[GroupFiller].CMax)
		}
	}
	// C3S: red hue (not 40°–75°, where oranges and browns lie), strong.
	if l, c, h := lch(kinetics.Lookup(kinetics.C3S).Colour); !(h >= 335 || h <= 40) || c < 60 || l < 38 {
		t.Errorf("C3S L* %.0f C* %.0f h %.0f°: want a strong red (h 335°–40°, C* ≥ 60, L* ≥ 38)", l, c, h)
	}
	// CH: green hue, well away from blue (≈ 260°–310°).
	if _, c, h := lch(kinetics.Lookup(kinetics.CH).Colour); h < 122 || h > 170 || c < 25 {
		t.Errorf("CH C* %.0f h %.0f°: want a green (h 122°–170°, C* ≥ 25)", c, h)
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
		for _, p := range paletteUnderTest(t) {
			if d := rgbDist(c, p.c); d < MinColourDistance {
				t.Errorf("fallback colour of id %d %v is %.1f from %s; want ≥ %d", id, c, d, p.key, MinColourDistance)
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
		"Mg": {12, 24.305}, "S": {16, 32.06}, "Ca": {20, 40.078}, "Fe": {26, 55.845},
	}
	var zm, m float64
	for e, n := range f {
		if _, ok := el[e]; !ok {
			panic("meanZ: no atomic weight for " + e)
		}
		zm += n * el[e].m * el[e].z
		m += n * el[e].m
	}
	return zm / m
}

// meanZFormulas gives each phase of the table its formula, element → atoms
// per formula unit, with the water of the hydrated phase (derived from the
// cement chemist notation: C = CaO, S = SiO2, A = Al2O3, F = Fe2O3,
// S̄ = SO3, C̄ = CO2, H = H2O). The empty pore holds no matter.
var meanZFormulas = map[string]map[string]float64{
	"water":         {"H": 2, "O": 1},                                       // H2O
	"empty":         {},                                                     // vacuum (mean Z 0)
	"c3s":           {"Ca": 3, "Si": 1, "O": 5},                             // Ca3SiO5
	"c2s":           {"Ca": 2, "Si": 1, "O": 4},                             // Ca2SiO4
	"c3a":           {"Ca": 3, "Al": 2, "O": 6},                             // Ca3Al2O6
	"c4af":          {"Ca": 4, "Al": 2, "Fe": 2, "O": 10},                   // Ca4Al2Fe2O10
	"gypsum":        {"Ca": 1, "S": 1, "O": 6, "H": 4},                      // CaSO4·2H2O
	"hemihydrate":   {"Ca": 1, "S": 1, "O": 4.5, "H": 1},                    // CaSO4·0.5H2O
	"anhydrite":     {"Ca": 1, "S": 1, "O": 4},                              // CaSO4
	"calcite":       {"Ca": 1, "C": 1, "O": 3},                              // CaCO3
	"inert":         {"Si": 1, "O": 2},                                      // SiO2 (quartz-like)
	"csh_inner":     {"Ca": 1.7, "Si": 1, "O": 7.7, "H": 8},                 // C1.7SH4
	"csh_outer":     {"Ca": 1.7, "Si": 1, "O": 7.7, "H": 8},                 // C1.7SH4
	"ch":            {"Ca": 1, "O": 2, "H": 2},                              // Ca(OH)2
	"aft":           {"Ca": 6, "Al": 2, "S": 3, "O": 50, "H": 64},           // Ca6Al2(SO4)3(OH)12·26H2O
	"afm":           {"Ca": 4, "Al": 2, "S": 1, "O": 22, "H": 24},           // Ca4Al2(SO4)(OH)12·6H2O
	"hydrogarnet":   {"Ca": 3, "Al": 2, "O": 12, "H": 12},                   // Ca3Al2(OH)12
	"fh3":           {"Fe": 2, "O": 6, "H": 6},                              // Fe2O3·3H2O = 2 Fe(OH)3
	"silica_fume":   {"Si": 1, "O": 2},                                      // SiO2
	"fly_ash":       {"Si": 1, "Al": 0.5, "Ca": 0.1, "O": 2.85},             // SA0.25C0.1
	"slag":          {"Ca": 1.2, "Si": 1, "Al": 0.32, "Mg": 0.4, "O": 4.08}, // C1.2SA0.16M0.4
	"metakaolin":    {"Al": 2, "Si": 2, "O": 7},                             // Al2O3·2SiO2
	"csh_low_ca":    {"Ca": 1.1, "Si": 1, "O": 6.5, "H": 6.8},               // C1.1SH3.4
	"stratlingite":  {"Ca": 2, "Al": 2, "Si": 1, "O": 15, "H": 16},          // C2ASH8
	"hydrotalcite":  {"Mg": 4, "Al": 2, "O": 17, "H": 20},                   // M4AH10
	"monocarbonate": {"Ca": 4, "Al": 2, "C": 1, "O": 20, "H": 22},           // 3CaO·Al2O3·CaCO3·11H2O
	"hemicarbonate": {"Ca": 4, "Al": 2, "C": 0.5, "O": 20, "H": 24},         // 3CaO·Al2O3·0.5CaCO3·0.5Ca(OH)2·11.5H2O
}

// Every phase's mean Z is that of its formula, the hydrates with their
// water (Fe(OH)3, not Fe2O3).
func TestMeanZFromFormulas(t *testing.T) {
	const tol = 0.01 // the table rounds to 0.01
	for _, p := range kinetics.Phases() {
		f, ok := meanZFormulas[p.Key]
		if !ok {
			t.Errorf("phase %s has no formula in meanZFormulas: add it", p.Key)
			continue
		}
		z := 0.0
		if len(f) > 0 {
			z = meanZ(f)
		}
		if math.Abs(z-p.MeanZ) > tol {
			t.Errorf("%s: mean Z from formula %.3f, table %.3f; want within %g", p.Key, z, p.MeanZ, tol)
		}
	}
	// The order BSE images show: C3S > CH > C-S-H, computed from the
	// formulas (C-S-H as C1.7SH4) — derived.
	zC3S, zCH, zCSH := meanZ(meanZFormulas["c3s"]), meanZ(meanZFormulas["ch"]), meanZ(meanZFormulas["csh_inner"])
	if !(zC3S > zCH && zCH > zCSH) {
		t.Errorf("mean Z C3S %.2f, CH %.2f, C-S-H %.2f: want C3S > CH > C-S-H", zC3S, zCH, zCSH)
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
