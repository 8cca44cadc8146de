package render

import (
	"fmt"
	"image/color"
	"math"

	"gelspace/kinetics"
)

// Look selects how phases are coloured.
type Look uint8

const (
	// LookPhase draws each phase in its categorical colour from the phase
	// table (Phase.Colour).
	LookPhase Look = iota
	// LookBSE draws a backscattered-electron-like grey scale: each solid
	// phase's grey follows its mean atomic number (see Grey); pores are black.
	LookBSE
)

var lookNames = [...]string{"phase", "bse"}

// String returns "phase" or "bse"; it is also the file-name suffix.
func (l Look) String() string {
	if int(l) < len(lookNames) {
		return lookNames[l]
	}
	return fmt.Sprintf("Look(%d)", uint8(l))
}

// The grey map of LookBSE. A solid phase of mean atomic number Z gets
//
//	grey = round(GreyDark + (GreyBright − GreyDark)·clamp((Z − ZDark)/(ZBright − ZDark), 0, 1))
//
// which is monotone non-decreasing in Z (strictly increasing between ZDark
// and ZBright). Pore phases (water-filled or empty) are black, as pores
// filled with low-Z epoxy are in a polished section. Backscatter yield rises
// with Z, so the order of greys follows the order of mean Z: clinker phases
// brightest, CH lighter than C-S-H, pores black.
const (
	ZDark      = 10.0 // mean Z at and below which a solid takes GreyDark
	ZBright    = 17.0 // mean Z at and above which a solid takes GreyBright
	GreyDark   = 56   // grey level of the lowest-Z solids (0–255)
	GreyBright = 250  // grey level of the highest-Z solids (0–255)
	// GreyUnknown is the grey of phase ids not in the table.
	GreyUnknown = 128
)

// Grey returns the LookBSE grey level (0–255) of a phase.
func Grey(p *kinetics.Phase) uint8 {
	if p.Role == kinetics.RolePore {
		return 0
	}
	f := (p.MeanZ - ZDark) / (ZBright - ZDark)
	f = math.Max(0, math.Min(1, f))
	return uint8(math.Round(GreyDark + (GreyBright-GreyDark)*f))
}

// The categorical palette is gelspace's own. Its colours live in the phase
// table (kinetics.Phase.Colour); the phases that are planned but not yet in
// the table have theirs in Planned, so that the palette is designed, and
// checked, for the whole set of about 27 phases at once.
//
// Every colour belongs to a palette group, the role block of its id (see
// GroupOf), and each group has a hue family of its own in CIELCh (D65,
// normal vision; see Families):
//
//	pores      very dark (L* ≤ 25): water-filled navy, empty black
//	clinker    reds and magentas (hue 335°–40°): C3S crimson, C2S pink,
//	           C3A magenta, C4AF dark wine
//	sulfates   yellows (hue 78°–100°): gypsum pale, hemihydrate full,
//	           anhydrite olive-gold
//	fillers    neutral greys (chroma ≤ 8)
//	SCMs       violets and blue-violets (hue 272°–322°)
//	hydrates   greens through teals to cyan (hue 122°–240°): C-S-H dark
//	           and light green, CH pale lime, AFt teal, AFm cyan
//
// Within a group, any two colours are at least MinColourDistance apart in
// RGB and at least MinDeltaE (25) CIELAB units (ΔE*ab) apart for normal
// vision and under simulated protanopia and deuteranopia. Across groups
// the colours are at least MinColourDistance apart in RGB and MinDeltaE
// apart for normal vision too; under the dichromat simulations the floor
// across groups is lower, MinCrossGroupDeltaE (16). A dichromat sees
// colours in about two dimensions (lightness and blue–yellow), and about
// 27 colours that each keep to their group's family do not all fit 25 ΔE
// apart there: a search over such palettes kept at best about 21 across
// groups, and about 16 once the everyday phases (clinker, gypsum, C-S-H,
// CH, AFt, AFm) were held to the lightness that keeps them legible side by
// side. Across groups the families then differ for such a viewer by
// lightness and the blue–yellow axis, and in the images by where they sit
// (clinker inside grains, hydrates around and between them, pores
// between).
//
// The tests check all of this over the table and Planned together.
const (
	// MinColourDistance is the smallest Euclidean RGB distance (channels
	// 0–255) between the colours of any two phases (table or planned), and
	// between a fallback colour and any of them.
	MinColourDistance = 40
	// MinDeltaE is the smallest CIELAB ΔE*ab between any two phases for
	// normal vision, and between two phases of one group under protanopia
	// and deuteranopia.
	MinDeltaE = 25
	// MinCrossGroupDeltaE is the smallest ΔE*ab between phases of different
	// groups under protanopia and deuteranopia (the palette keeps 16.4 and
	// 17.2).
	MinCrossGroupDeltaE = 16
)

// Group is a palette group: the role block of a phase id.
type Group uint8

const (
	GroupPore    Group = iota // ids 1–19
	GroupClinker              // ids 20–39
	GroupSulfate              // ids 40–49
	GroupFiller               // ids 50–59
	GroupSCM                  // ids 60–99, supplementary cementitious materials
	GroupHydrate              // ids 100–199
	numGroups
)

var groupNames = [...]string{"pores", "clinker", "sulfates", "fillers", "SCMs", "hydrates"}

func (g Group) String() string {
	if int(g) < len(groupNames) {
		return groupNames[g]
	}
	return fmt.Sprintf("Group(%d)", uint8(g))
}

// GroupOf returns the palette group of a phase id by its id block, and
// false for 0 and ids from 200 on, which belong to no block.
func GroupOf(id uint8) (Group, bool) {
	switch {
	case id == 0 || id >= 200:
		return 0, false
	case id < 20:
		return GroupPore, true
	case id < 40:
		return GroupClinker, true
	case id < 50:
		return GroupSulfate, true
	case id < 60:
		return GroupFiller, true
	case id < 100:
		return GroupSCM, true
	}
	return GroupHydrate, true
}

// Family is the region of CIELCh (D65, normal vision) that a group's colours
// keep to: lightness L* in [LMin, LMax], chroma C* in [CMin, CMax] and, when
// HueFrom ≠ HueTo, hue h in degrees from HueFrom counter-clockwise to HueTo
// (HueFrom > HueTo wraps through 0°).
type Family struct {
	LMin, LMax, CMin, CMax float64
	HueFrom, HueTo         float64
}

// Families returns the hue family of each group, indexed by Group.
func Families() [numGroups]Family {
	return [numGroups]Family{
		GroupPore:    {LMin: 0, LMax: 25, CMin: 0, CMax: 50},
		GroupClinker: {LMin: 12, LMax: 97, CMin: 18, CMax: 200, HueFrom: 335, HueTo: 40},
		GroupSulfate: {LMin: 58, LMax: 100, CMin: 28, CMax: 200, HueFrom: 78, HueTo: 100},
		GroupFiller:  {LMin: 30, LMax: 96, CMin: 0, CMax: 8},
		GroupSCM:     {LMin: 18, LMax: 92, CMin: 22, CMax: 200, HueFrom: 272, HueTo: 322},
		GroupHydrate: {LMin: 18, LMax: 100, CMin: 18, CMax: 200, HueFrom: 122, HueTo: 240},
	}
}

// PlannedPhase is a phase whose id is reserved and whose colour is chosen,
// but which is not yet in the phase table.
type PlannedPhase struct {
	ID     uint8
	Key    string
	Colour color.RGBA
}

// planned holds the colours of the reserved phases (ids from the kinetics
// id blocks), with the keys they are expected to take. When a phase joins
// the table it takes the colour listed here and leaves this list (the test
// fails while an id is in both).
var planned = []PlannedPhase{
	// Empty: the SCM and blend phases (61, 63, 65, 67, 104, 128, 134)
	// joined the table with the colours chosen for them here.
}

// Planned returns the reserved phases and their colours, in id order.
func Planned() []PlannedPhase { return append([]PlannedPhase(nil), planned...) }

// paletteColours returns the colours of the table and the planned phases.
func paletteColours() []color.RGBA {
	var cs []color.RGBA
	for _, p := range kinetics.Phases() {
		cs = append(cs, p.Colour)
	}
	for _, p := range planned {
		cs = append(cs, p.Colour)
	}
	return cs
}

// rgbDist returns the Euclidean distance of two colours in RGB (0–255).
func rgbDist(a, b color.RGBA) float64 {
	dr := float64(a.R) - float64(b.R)
	dg := float64(a.G) - float64(b.G)
	db := float64(a.B) - float64(b.B)
	return math.Sqrt(dr*dr + dg*dg + db*db)
}

// FallbackColour returns the colour used for a phase id that is not in the
// phase table. Ids map to hues spaced by the golden angle and one of nine
// saturation–value pairs, moved on in hue until they keep MinColourDistance
// from every table and planned colour, so two unknown ids are unlikely to
// look alike and none looks like a known or planned phase.
func FallbackColour(id uint8) color.RGBA {
	h := math.Mod(float64(id)*137.50776405, 360)
	sat := 0.45 + 0.15*float64(id%3)
	val := 0.80 + 0.08*float64(id/3%3)
	known := paletteColours()
	for try := 0; try < 360; try++ {
		c := hsv(h, sat, val)
		ok := true
		for _, k := range known {
			if rgbDist(c, k) < MinColourDistance {
				ok = false
				break
			}
		}
		if ok {
			return c
		}
		h = math.Mod(h+7, 360)
	}
	return color.RGBA{0x80, 0x80, 0x80, 0xff}
}

// hsv converts hue (degrees), saturation and value (0–1) to RGB.
func hsv(h, s, v float64) color.RGBA {
	c := v * s
	hp := h / 60
	x := c * (1 - math.Abs(math.Mod(hp, 2)-1))
	var r, g, b float64
	switch {
	case hp < 1:
		r, g = c, x
	case hp < 2:
		r, g = x, c
	case hp < 3:
		g, b = c, x
	case hp < 4:
		g, b = x, c
	case hp < 5:
		r, b = x, c
	default:
		r, b = c, x
	}
	m := v - c
	q := func(f float64) uint8 { return uint8(math.Round(255 * (f + m))) }
	return color.RGBA{q(r), q(g), q(b), 0xff}
}

// lut is a colour for every possible phase id under one look.
type lut [256]color.RGBA

func newLUT(look Look) *lut {
	var t lut
	for id := range t {
		t[id] = PhaseColour(uint8(id), look)
	}
	return &t
}

// PhaseColour returns the colour of a phase id under a look, including the
// fallback for ids not in the table.
func PhaseColour(id uint8, look Look) color.RGBA {
	p := kinetics.Lookup(id)
	switch {
	case p == nil && look == LookBSE:
		return color.RGBA{GreyUnknown, GreyUnknown, GreyUnknown, 0xff}
	case p == nil:
		return FallbackColour(id)
	case look == LookBSE:
		g := Grey(p)
		return color.RGBA{g, g, g, 0xff}
	}
	return p.Colour
}

// PhaseLabel returns the legend text of a phase id: the trade name from the
// table, or "id N" for an id not in the table.
func PhaseLabel(id uint8) string {
	if p := kinetics.Lookup(id); p != nil {
		return p.Name
	}
	return fmt.Sprintf("id %d", id)
}
