package render

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"github.com/fogleman/gg"
)

// SliceOptions controls a slice image. The zero value draws phase colours,
// chooses the magnification, lists the phases present and shows no age.
type SliceOptions struct {
	Look Look
	// PixelsPerVoxel is the edge of one voxel in image pixels (nearest
	// neighbour). 0 chooses the largest integer that keeps the slice within
	// MaxSlicePX in both directions (at least 1).
	PixelsPerVoxel int
	// LegendAll lists every phase of the table, not only those present.
	LegendAll bool
	// ShowAge prints AgeH, the simulated age in hours, in the header.
	ShowAge bool
	AgeH    float64
	// Title replaces the default first header line, SliceTitle(plane, pos,
	// voxel size). A caller that renders one plane cut out of a larger box
	// passes SliceTitle of the plane's place in that box.
	Title string
}

// SliceTitle returns the header line of the slice at index pos along the
// plane's normal: "xy slice at z = 20 (voxel centres at 20.5 µm)". Voxel k
// spans [k·h, (k+1)·h) along an axis of a box of voxel edge h, so the plane
// of index k is named by the position of its voxel centres, (k + 0.5)·h µm.
// Every slice, time-lapse and report title uses this one convention.
func SliceTitle(plane Plane, pos int, voxelUM float64) string {
	_, _, n := plane.axes()
	return fmt.Sprintf("%s slice at %s = %d (voxel centres at %s µm)", plane, n, pos, fmtNum((float64(pos)+0.5)*voxelUM))
}

// MaxSlicePX bounds the automatic magnification: a slice of a 50–200 voxel
// box is drawn 600–800 px wide.
const MaxSlicePX = 800

// AutoPixelsPerVoxel returns the magnification chosen when
// SliceOptions.PixelsPerVoxel is 0 for a w×h voxel slice.
func AutoPixelsPerVoxel(w, h int) int {
	k := MaxSlicePX / max(w, h)
	return max(k, 1)
}

// ScaleBarUM returns the length in µm of the scale bar drawn under a slice
// widthUM wide: the largest of 1, 2 or 5 × 10^k µm not longer than a quarter
// of the width.
func ScaleBarUM(widthUM float64) float64 {
	target := widthUM / 4
	e := math.Pow(10, math.Floor(math.Log10(target)))
	for _, m := range []float64{5, 2, 1} {
		if m*e <= target*(1+1e-9) {
			return m * e
		}
	}
	return e
}

// Layout of slice images, in pixels.
const (
	marginPX   = 20.0
	headerPX   = 52.0 // from the top margin to the top of the slice
	footerPX   = 58.0 // below the slice: scale bar and axis glyph
	legendGap  = 28.0 // between the slice and the legend
	barThickPX = 6
)

// RenderSlice draws the slice of v at position pos (voxels along the plane's
// normal) with header, legend, scale bar and axis glyph.
func RenderSlice(v Volume, plane Plane, pos int, opt SliceOptions) (*image.RGBA, error) {
	data, w, h, err := v.Extract(plane, pos)
	if err != nil {
		return nil, err
	}
	if err := checkSliceOptions(&opt); err != nil {
		return nil, err
	}
	var c counts
	c.add(data)
	ids := legendIDs(&c, opt.LegendAll)
	return drawSlice(data, w, h, v.VoxelUM, plane, pos, ids, opt), nil
}

func checkSliceOptions(opt *SliceOptions) error {
	if opt.Look > LookBSE {
		return fmt.Errorf("render: look %d: must be LookPhase (0) or LookBSE (1)", uint8(opt.Look))
	}
	if opt.PixelsPerVoxel < 0 || opt.PixelsPerVoxel > 64 {
		return fmt.Errorf("render: %d pixels per voxel: must be in 0..64 (0 = automatic)", opt.PixelsPerVoxel)
	}
	if opt.ShowAge && !(opt.AgeH >= 0) {
		return fmt.Errorf("render: age %g h: must be ≥ 0", opt.AgeH)
	}
	return nil
}

// sliceGeom is where the parts of a slice image go.
type sliceGeom struct {
	ppv           int
	x0, y0        int // top-left pixel of the slice
	wPX, hPX      int // slice size in pixels
	legX, legY    float64
	width, height int
}

func layoutSlice(w, h int, leg *legend, ppv int) sliceGeom {
	g := sliceGeom{ppv: ppv, x0: int(marginPX), y0: int(marginPX + headerPX), wPX: w * ppv, hPX: h * ppv}
	g.legX = float64(g.x0+g.wPX) + legendGap
	g.legY = float64(g.y0)
	g.width = int(math.Ceil(g.legX + leg.W + marginPX))
	g.height = int(math.Ceil(math.Max(float64(g.y0+g.hPX)+footerPX, g.legY+leg.H) + marginPX))
	// Room for the header line on narrow slices.
	g.width = max(g.width, 560)
	return g
}

// drawSlice renders w×h phase data (u + w*t, t = 0 at the bottom) with the
// legend listing ids.
func drawSlice(data []uint8, w, h int, voxelUM float64, plane Plane, pos int, ids []uint8, opt SliceOptions) *image.RGBA {
	ppv := opt.PixelsPerVoxel
	if ppv == 0 {
		ppv = AutoPixelsPerVoxel(w, h)
	}
	var c counts
	c.add(data)
	total := float64(c.total())

	fs := newFonts()
	probe := gg.NewContext(1, 1)
	leg := newLegend(probe, fs, opt.Look, ids, func(id uint8) float64 { return 100 * float64(c[id]) / total },
		"Phase (area %)")
	g := layoutSlice(w, h, leg, ppv)

	img := image.NewRGBA(image.Rect(0, 0, g.width, g.height))
	dc := gg.NewContextForRGBA(img)
	dc.SetColor(color.White)
	dc.Clear()

	paintSlice(img, g.x0, g.y0, data, w, h, ppv, newLUT(opt.Look))

	// Frame around the slice, outside its pixels.
	dc.SetColor(color.Gray{0x40})
	dc.SetLineWidth(1)
	dc.DrawRectangle(float64(g.x0)-0.5, float64(g.y0)-0.5, float64(g.wPX)+1, float64(g.hPX)+1)
	dc.Stroke()

	// Header.
	hn, vn, _ := plane.axes()
	title := opt.Title
	if title == "" {
		title = SliceTitle(plane, pos, voxelUM)
	}
	fs.set(dc, fs.title)
	dc.SetColor(color.Black)
	dc.DrawString(title, marginPX, marginPX+16)
	fs.set(dc, fs.text)
	sub := fmt.Sprintf("%d × %d voxels of %s µm", w, h, fmtNum(voxelUM))
	if opt.ShowAge {
		sub = "age " + fmtAge(opt.AgeH) + "  ·  " + sub
	}
	if opt.Look == LookBSE {
		sub += "  ·  BSE-like grey: brighter = higher mean Z"
	}
	dc.SetColor(color.Gray{0x30})
	dc.DrawString(sub, marginPX, marginPX+38)

	// Scale bar under the slice, left.
	barUM := ScaleBarUM(float64(w) * voxelUM)
	barPX := int(math.Round(barUM / voxelUM * float64(ppv)))
	by := g.y0 + g.hPX + 22
	dc.SetColor(color.Black)
	draw1(img, g.x0, by, barPX, barThickPX, color.RGBA{0, 0, 0, 0xff})
	dc.DrawStringAnchored(fmtNum(barUM)+" µm", float64(g.x0+barPX)+10, float64(by)+barThickPX/2, 0, 0.35)

	// Axis glyph under the slice, right.
	drawAxisGlyph(dc, float64(g.x0+g.wPX)-48, float64(g.y0+g.hPX)+50, hn, vn)

	leg.draw(dc, g.legX, g.legY, fs)
	return img
}

// paintSlice writes the scaled slice into img with its top-left pixel at
// (x0, y0). Data row t = 0 is drawn at the bottom.
func paintSlice(img *image.RGBA, x0, y0 int, data []uint8, w, h, ppv int, t *lut) {
	rowBytes := w * ppv * 4
	for r := 0; r < h; r++ {
		src := data[(h-1-r)*w : (h-r)*w]
		first := img.PixOffset(x0, y0+r*ppv)
		row := img.Pix[first : first+rowBytes]
		for u, id := range src {
			c := t[id]
			for k := 0; k < ppv; k++ {
				o := (u*ppv + k) * 4
				row[o], row[o+1], row[o+2], row[o+3] = c.R, c.G, c.B, c.A
			}
		}
		for k := 1; k < ppv; k++ {
			o := img.PixOffset(x0, y0+r*ppv+k)
			copy(img.Pix[o:o+rowBytes], row)
		}
	}
}

// draw1 fills a w×h rectangle of img with c, pixel-exact.
func draw1(img *image.RGBA, x0, y0, w, h int, c color.RGBA) {
	for y := y0; y < y0+h; y++ {
		for x := x0; x < x0+w; x++ {
			img.SetRGBA(x, y, c)
		}
	}
}

// drawAxisGlyph draws two arrows from (x, y): right labelled hn, up
// labelled vn.
func drawAxisGlyph(dc *gg.Context, x, y float64, hn, vn string) {
	const L = 30.0
	dc.SetColor(color.Gray{0x20})
	dc.SetLineWidth(1.6)
	dc.DrawLine(x, y, x+L, y)
	dc.DrawLine(x, y, x, y-L)
	dc.Stroke()
	arrow := func(tx, ty, dx, dy float64) {
		dc.MoveTo(tx, ty)
		dc.LineTo(tx-6*dx+3.5*dy, ty-6*dy-3.5*dx)
		dc.LineTo(tx-6*dx-3.5*dy, ty-6*dy+3.5*dx)
		dc.ClosePath()
		dc.Fill()
	}
	arrow(x+L+2, y, 1, 0)
	arrow(x, y-L-2, 0, -1)
	dc.DrawStringAnchored(hn, x+L+7, y, 0, 0.35)
	dc.DrawStringAnchored(vn, x-6, y-L+4, 1, 0.35)
}

// fmtNum prints a length or size compactly: 0.5, 1, 12.5, 100.
func fmtNum(v float64) string { return fmt.Sprintf("%.4g", v) }

// fmtHMin prints an age in hours and in hours and minutes: "5.5 h (5 h 30
// min)".
func fmtHMin(h float64) string {
	m := int(math.Round(h * 60))
	return fmt.Sprintf("%.4g h (%d h %02d min)", h, m/60, m%60)
}

// fmtAge prints an age in hours, adding days from one day on.
func fmtAge(h float64) string {
	if h >= 24 {
		return fmt.Sprintf("%.4g h (%.3g d)", h, h/24)
	}
	return fmt.Sprintf("%.3g h", h)
}
