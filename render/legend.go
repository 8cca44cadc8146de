package render

import (
	"fmt"
	"image/color"
	"math"

	"github.com/fogleman/gg"
	"gonum.org/v1/plot/font"

	"gelspace/kinetics"
)

// counts is a histogram of phase ids.
type counts [256]int

func (c *counts) add(data []uint8) {
	for _, id := range data {
		c[id]++
	}
}

func (c *counts) total() int {
	n := 0
	for _, k := range c {
		n += k
	}
	return n
}

// legendIDs returns the ids to list: every id present in c, plus every
// table phase when all is set, table phases first in table order, then
// unknown ids in increasing order.
func legendIDs(c *counts, all bool) []uint8 {
	var ids []uint8
	var known [256]bool
	for _, p := range kinetics.Phases() {
		known[p.ID] = true
		if all || c[p.ID] > 0 {
			ids = append(ids, p.ID)
		}
	}
	for id := 0; id < 256; id++ {
		if !known[id] && c[id] > 0 {
			ids = append(ids, uint8(id))
		}
	}
	return ids
}

// legend is a measured legend box ready to draw.
type legend struct {
	look       Look
	ids        []uint8
	labels     []string
	pcts       []string
	colW       float64 // width of the label column, px
	pctW       float64 // width of the percent column, px
	W, H       float64 // size of the whole legend, px
	title      string
	rowH, swat float64
	text       font.Face // face the entries are measured and drawn in
	lineH      float64   // gg's line height of that face, px (its anchors use it)
}

const (
	legendRowPX    = 22.0 // height of one legend row
	legendSwatchPX = 16.0 // edge of the colour swatch
	legendGapPX    = 10.0 // gap between swatch and text, and between columns
)

// Legend text is laid out glyph by glyph at each glyph's advance width,
// without the font's kerning pairs: Liberation Sans kerns "11" so tightly
// that the digits of "11.5 %" touch at 14 px, and kerning would also make
// figures of equal digit count differ in width down a column. A small
// letter spacing, legendTrackingPX, keeps the figures of a percentage
// clearly apart (Liberation Sans leaves under 1 px between "8" and "4" at
// 14 px). textWidth and drawText share this layout, so what is measured is
// what is drawn.

// legendTrackingPX is the space added between neighbouring glyphs of legend
// text, in pixels.
const legendTrackingPX = 0.6

// glyphX returns the pen position of each rune of s, from 0, and the
// advance width of the whole string, in pixels (the faces are used at 72
// dpi, so points are pixels): each rune's advance, measured alone, which
// leaves kerning out, plus legendTrackingPX between runes.
func glyphX(f font.Face, s string) (xs []float64, width float64) {
	pen := 0.0
	for i, r := range []rune(s) {
		if i > 0 {
			pen += legendTrackingPX
		}
		xs = append(xs, pen)
		pen += float64(f.Width(string(r)))
	}
	return xs, pen
}

// textWidth returns the width of s as drawText lays it out, in pixels.
func textWidth(f font.Face, s string) float64 {
	_, w := glyphX(f, s)
	return w
}

// drawText draws s in face f (which must be dc's current face, set with
// fonts.set) with the anchor (ax, ay) of gg's DrawStringAnchored: ax = 0
// puts the left edge at x, ax = 1 the right edge.
func drawText(dc *gg.Context, f font.Face, s string, x, y, ax, ay float64) {
	xs, w := glyphX(f, s)
	x -= ax * w
	i := 0
	for _, r := range s {
		dc.DrawStringAnchored(string(r), x+xs[i], y, 0, ay)
		i++
	}
}

// newLegend measures a legend for ids. pct gives, for each id, the area or
// volume percent to print, or NaN to print none.
func newLegend(dc *gg.Context, fs *fonts, look Look, ids []uint8, pct func(uint8) float64, title string) *legend {
	fs.set(dc, fs.text)
	l := &legend{look: look, ids: ids, title: title, rowH: legendRowPX, swat: legendSwatchPX, text: fs.text}
	_, l.lineH = dc.MeasureString("0")
	for _, id := range ids {
		lab := PhaseLabel(id)
		if look == LookBSE {
			if p := kinetics.Lookup(id); p != nil && p.Role != kinetics.RolePore {
				lab += fmt.Sprintf("  (mean Z %.1f)", p.MeanZ)
			}
		}
		l.labels = append(l.labels, lab)
		l.colW = math.Max(l.colW, textWidth(l.text, lab))
		s := ""
		if v := pct(id); !math.IsNaN(v) {
			s = fmt.Sprintf("%.1f %%", v)
		}
		l.pcts = append(l.pcts, s)
		l.pctW = math.Max(l.pctW, textWidth(l.text, s))
	}
	// The percent column is never narrower than "100.0 %", so a legend's
	// size depends on its labels alone and the frames of a time-lapse,
	// whose percentages change, keep one size.
	if len(l.pcts) > 0 {
		l.pctW = math.Max(l.pctW, textWidth(l.text, "100.0 %"))
	}
	fs.set(dc, fs.bold)
	tw := textWidth(fs.bold, title)
	fs.set(dc, fs.text)
	l.W = math.Max(tw, l.swat+legendGapPX+l.colW+legendGapPX+l.pctW)
	l.H = legendRowPX + float64(len(ids))*legendRowPX
	return l
}

// box is an axis-aligned rectangle in pixels, [X0, X1) × [Y0, Y1).
type box struct{ X0, Y0, X1, Y1 float64 }

func (a box) overlaps(b box) bool {
	return a.X0 < b.X1 && b.X0 < a.X1 && a.Y0 < b.Y1 && b.Y0 < a.Y1
}

// entryBoxes returns, for the legend with its top-left corner at (x, y),
// the boxes of each row's swatch, label and percent text (text boxes span
// the advance width and the row's text height), row by row. draw puts
// every part inside its box.
func (l *legend) entryBoxes(x, y float64) [][3]box {
	e := l.text.Extents()
	asc, desc := float64(e.Ascent), float64(e.Descent)
	out := make([][3]box, len(l.ids))
	for i := range l.ids {
		cy := y + legendRowPX*(float64(i)+1.5)
		// gg's anchor ay = 0.35 puts the baseline 0.35 line heights below cy.
		base := cy + 0.35*l.lineH
		tx := x + l.swat + legendGapPX
		pw := textWidth(l.text, l.pcts[i])
		out[i] = [3]box{
			{x, cy - l.swat/2, x + l.swat + 1, cy + l.swat/2 + 1},
			{tx, base - asc, tx + textWidth(l.text, l.labels[i]), base + desc},
			{x + l.W - pw, base - asc, x + l.W, base + desc},
		}
	}
	return out
}

// draw draws the legend with its top-left corner at (x, y), the title in
// bold and the entries in the text font. It leaves the text font set.
func (l *legend) draw(dc *gg.Context, x, y float64, fs *fonts) {
	dc.SetColor(color.Black)
	fs.set(dc, fs.bold)
	drawText(dc, fs.bold, l.title, x, y+legendRowPX/2, 0, 0.35)
	fs.set(dc, fs.text)
	for i, id := range l.ids {
		cy := y + legendRowPX*(float64(i)+1.5)
		c := PhaseColour(id, l.look)
		dc.DrawRectangle(x+0.5, cy-l.swat/2+0.5, l.swat, l.swat)
		dc.SetColor(c)
		dc.FillPreserve()
		dc.SetColor(color.Gray{0x55})
		dc.SetLineWidth(1)
		dc.Stroke()
		dc.SetColor(color.Black)
		drawText(dc, l.text, l.labels[i], x+l.swat+legendGapPX, cy, 0, 0.35)
		drawText(dc, l.text, l.pcts[i], x+l.W, cy, 1, 0.35)
	}
}
