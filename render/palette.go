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

// MinColourDistance is the smallest Euclidean RGB distance (channels 0–255)
// that this package requires between the colours of any two phases of the
// table and between a fallback colour and any table colour. The palette in
// the phase table was tuned so that, beyond this, any two colours stay at
// least 25 CIELAB units apart for normal vision and under a simulation of
// protanopia and deuteranopia (the tests check both).
const MinColourDistance = 40

// rgbDist returns the Euclidean distance of two colours in RGB (0–255).
func rgbDist(a, b color.RGBA) float64 {
	dr := float64(a.R) - float64(b.R)
	dg := float64(a.G) - float64(b.G)
	db := float64(a.B) - float64(b.B)
	return math.Sqrt(dr*dr + dg*dg + db*db)
}

// FallbackColour returns the colour used for a phase id that is not in the
// phase table. Ids map to hues spaced by the golden angle
// and one of nine saturation–value pairs, moved on in hue until they keep MinColourDistance from every table
// colour, so two unknown ids are unlikely to look alike and none looks like a
// known phase.
func FallbackColour(id uint8) color.RGBA {
	h := math.Mod(float64(id)*137.50776405, 360)
	sat := 0.45 + 0.15*float64(id%3)
	val := 0.80 + 0.08*float64(id/3%3)
	for try := 0; try < 360; try++ {
		c := hsv(h, sat, val)
		ok := true
		for i := range kinetics.Phases() {
			if rgbDist(c, kinetics.Phases()[i].Colour) < MinColourDistance {
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
