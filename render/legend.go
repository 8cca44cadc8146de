package render

import (
	"fmt"
	"image/color"
	"math"

	"github.com/fogleman/gg"

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
}

const (
	legendRowPX    = 22.0 // height of one legend row
	legendSwatchPX = 16.0 // edge of the colour swatch
	legendGapPX    = 10.0 // gap between swatch and text, and between columns
)

// newLegend measures a legend for ids. pct gives, for each id, the area or
// volume percent to print, or NaN to print none.
func newLegend(dc *gg.Context, fs *fonts, look Look, ids []uint8, pct func(uint8) float64, title string) *legend {
	fs.set(dc, fs.text)
	l := &legend{look: look, ids: ids, title: title, rowH: legendRowPX, swat: legendSwatchPX}
	for _, id := range ids {
		lab := PhaseLabel(id)
		if look == LookBSE {
			if p := kinetics.Lookup(id); p != nil && p.Role != kinetics.RolePore {
				lab += fmt.Sprintf("  (mean Z %.1f)", p.MeanZ)
			}
		}
		l.labels = append(l.labels, lab)
		w, _ := dc.MeasureString(lab)
		l.colW = math.Max(l.colW, w)
		s := ""
		if v := pct(id); !math.IsNaN(v) {
			s = fmt.Sprintf("%.1f %%", v)
		}
		l.pcts = append(l.pcts, s)
		w, _ = dc.MeasureString(s)
		l.pctW = math.Max(l.pctW, w)
	}
	fs.set(dc, fs.bold)
	tw, _ := dc.MeasureString(title)
	fs.set(dc, fs.text)
	l.W = math.Max(tw, l.swat+legendGapPX+l.colW+legendGapPX+l.pctW)
	l.H = legendRowPX + float64(len(ids))*legendRowPX
	return l
}

// draw draws the legend with its top-left corner at (x, y), the title in
// bold and the entries in the text font. It leaves the text font set.
func (l *legend) draw(dc *gg.Context, x, y float64, fs *fonts) {
	dc.SetColor(color.Black)
	fs.set(dc, fs.bold)
	dc.DrawStringAnchored(l.title, x, y+legendRowPX/2, 0, 0.35)
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
		dc.DrawStringAnchored(l.labels[i], x+l.swat+legendGapPX, cy, 0, 0.35)
		dc.DrawStringAnchored(l.pcts[i], x+l.W, cy, 1, 0.35)
	}
}
