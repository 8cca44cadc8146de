package render

import (
	"fmt"
	"math"
	"testing"

	"github.com/fogleman/gg"

	"gelspace/kinetics"
)

// minFigureGapPX is the clear space the legend keeps between the ink of
// neighbouring glyphs of a percentage. With the font's kerning pair "11"
// the two ones of "11.5 %" were 0.7 px apart at 14 px and ran together
// once anti-aliased; at their advances plus legendTrackingPX they are
// 2.3 px apart, and the closest figures ("84") 1.5 px.
const minFigureGapPX = 1.2

// Neighbouring glyphs of legend text must not overlap: the ink box of each
// glyph, at the pen position drawText gives it, ends before the next
// glyph's ink begins (by minFigureGapPX in percentages).
func TestLegendGlyphsDoNotOverlap(t *testing.T) {
	fs := newFonts()
	xf := fs.text.FontFace(72)
	var strs []string
	gaps := map[string]float64{}
	for v := 0.0; v <= 100; v += 0.1 {
		s := fmt.Sprintf("%.1f %%", v)
		strs = append(strs, s)
		gaps[s] = minFigureGapPX
	}
	strs = append(strs, "Phase (area %)")
	for _, p := range kinetics.Phases() {
		strs = append(strs, PhaseLabel(p.ID))
	}
	for _, s := range strs {
		xs, _ := glyphX(fs.text, s)
		rs := []rune(s)
		prevEnd, prev := math.Inf(-1), rune(0)
		for i, r := range rs {
			b, _, ok := xf.GlyphBounds(r)
			if !ok {
				t.Fatalf("%q: no glyph for %q", s, r)
			}
			if b.Max.X <= b.Min.X { // a space has no ink
				continue
			}
			x0, x1 := xs[i]+float64(b.Min.X)/64, xs[i]+float64(b.Max.X)/64
			if x0 < prevEnd+gaps[s] {
				t.Errorf("%q: ink of %q starts at %.2f px, %.2f px after %q ends; want ≥ %g", s, r, x0, x0-prevEnd, prev, gaps[s])
			}
			prevEnd, prev = x1, r
		}
	}
}

// The parts of legend entries (swatch, label, percent) must not overlap,
// neither within a row nor between rows, and must lie inside the legend.
func TestLegendEntriesDoNotOverlap(t *testing.T) {
	var ids []uint8
	for _, p := range kinetics.Phases() {
		ids = append(ids, p.ID)
	}
	ids = append(ids, 77)
	pcts := []float64{11.5, 100, 0.1, 47.3, 9.9}
	for _, look := range []Look{LookPhase, LookBSE} {
		fs := newFonts()
		dc := gg.NewContext(1, 1)
		k := 0
		l := newLegend(dc, fs, look, ids, func(uint8) float64 { k++; return pcts[k%len(pcts)] }, "Phase (area %)")
		const x0, y0 = 30.0, 40.0
		rows := l.entryBoxes(x0, y0)
		var all []box
		for _, r := range rows {
			all = append(all, r[:]...)
		}
		for i := range all {
			b := all[i]
			if b.X0 < x0 || b.X1 > x0+l.W+1 || b.Y0 < y0 || b.Y1 > y0+l.H {
				t.Errorf("%s: legend part %d %+v outside the legend %.1f × %.1f at (%g, %g)", look, i, b, l.W, l.H, x0, y0)
			}
			for j := i + 1; j < len(all); j++ {
				if b.overlaps(all[j]) {
					t.Errorf("%s: legend parts %d %+v and %d %+v overlap (row %d, %d)", look, i, b, j, all[j], i/3, j/3)
				}
			}
		}
	}
}

// A legend's size does not depend on the percentages it prints, so the
// frames of a time-lapse keep one size.
func TestLegendSizeIndependentOfPercent(t *testing.T) {
	ids := []uint8{kinetics.Water, kinetics.C3S, kinetics.CH}
	var w, h []float64
	for _, v := range []float64{0, 1.5, 11.5, 100} {
		l := newLegend(gg.NewContext(1, 1), newFonts(), LookPhase, ids, func(uint8) float64 { return v }, "Phase (area %)")
		w, h = append(w, l.W), append(h, l.H)
	}
	for i := range w {
		if w[i] != w[0] || h[i] != h[0] {
			t.Errorf("legend sizes %v × %v differ with the percentages", w, h)
			break
		}
	}
}
