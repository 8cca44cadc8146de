package render

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/font"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"
	"gonum.org/v1/plot/vg/vgsvg"

	"gelspace/kinetics"
)

// PlotOptions controls the time-series plots.
type PlotOptions struct {
	// WC is the mix's water-to-cement mass ratio, for the Powers-model
	// capillary porosity; it must be in (0, 2].
	WC float64
	// SetTimeH and DepercolationTimeH mark the set point (solids
	// percolation) and the capillary-pore depercolation on the connectivity
	// plot; NaN or ≤ 0 means the event did not happen (no line).
	SetTimeH, DepercolationTimeH float64
	// LinearTime draws time on a linear axis in hours instead of the
	// default logarithmic one.
	LinearTime bool
	// Calorimetry, when not nil, marks its landmarks on the calorimetry
	// plot.
	Calorimetry *CalorimetryMarks
	// Powder names what the per-gram values are of: "cement" when empty,
	// "binder" for a blend.
	Powder string
}

func (o PlotOptions) powder() string {
	if o.Powder == "" {
		return "cement"
	}
	return o.Powder
}

// Figure is one rendered plot.
type Figure struct {
	Name  string // file stem: "alpha", "heat", …
	Title string
	PNG   []byte
	SVG   []byte
}

// Plot size and resolution: 8 × 5 in at 100 dpi, 800 × 500 px.
const (
	plotWidthIn  = 8
	plotHeightIn = 5
	plotDPI      = 100
)

// PowersCapillaryPorosity returns the capillary porosity (water-filled plus
// empty, fraction of paste volume) of a paste of water-to-cement ratio wc at
// degree of hydration alpha by the Powers model,
//
//	φ = (w/c − 0.36 α) / (w/c + 0.32),
//
// as given by Mindess, Young & Darwin, Concrete (2003); it is clamped at 0.
func PowersCapillaryPorosity(wc, alpha float64) float64 {
	return math.Max(0, (wc-0.36*alpha)/(wc+0.32))
}

// present returns the points of (x, y) that can be drawn: both values
// finite, and positive on a log axis. Missing values (NaN) are skipped, so
// they are never drawn as zeros; gaps reports whether any row between the
// first and the last drawable one was skipped.
func present(xs, ys []float64, logX, logY bool) (pts plotter.XYs, gaps bool) {
	skipped := false
	for i := range xs {
		x, y := xs[i], ys[i]
		ok := !math.IsNaN(x) && !math.IsInf(x, 0) && !math.IsNaN(y) && !math.IsInf(y, 0) &&
			(!logX || x > 0) && (!logY || y > 0)
		if !ok {
			skipped = len(pts) > 0
			continue
		}
		gaps = gaps || skipped
		skipped = false
		pts = append(pts, plotter.XY{X: x, Y: y})
	}
	return pts, gaps
}

// curveStyle is how one curve is drawn.
type curveStyle struct {
	colour color.Color
	width  float64 // points
	dashes []vg.Length
}

// addCurve draws the present points of (xs, ys) on p, joined by a line,
// and adds one legend entry; where values are missing between present ones
// (a quantity computed only at some output times) the present points are
// also marked. It returns false (and adds nothing) when no point can be
// drawn.
func addCurve(p *plot.Plot, name string, xs, ys []float64, st curveStyle, logX, logY bool) bool {
	pts, gaps := present(xs, ys, logX, logY)
	if len(pts) == 0 {
		return false
	}
	l, err := plotter.NewLine(pts)
	if err != nil {
		panic("render: " + err.Error()) // present keeps only finite points
	}
	l.LineStyle.Color = st.colour
	l.LineStyle.Width = vg.Points(st.width)
	l.LineStyle.Dashes = st.dashes
	p.Add(l)
	if gaps || len(pts) == 1 {
		sc, _ := plotter.NewScatter(pts)
		sc.GlyphStyle.Color = st.colour
		sc.GlyphStyle.Radius = vg.Points(2.2)
		sc.GlyphStyle.Shape = draw.CircleGlyph{}
		p.Add(sc)
	}
	if name != "" {
		p.Legend.Add(name, l)
	}
	return true
}

// timeRange sets the time axis of p to the rows' time range (positive
// times only on a log axis), so that every plot shows the same span.
func timeRange(p *plot.Plot, t []float64, logX bool) {
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range t {
		if math.IsNaN(v) || math.IsInf(v, 0) || (logX && v <= 0) {
			continue
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	if lo <= hi {
		p.X.Min, p.X.Max = lo, hi
	}
}

// vline draws a vertical dashed line at x from y0 to y1.
func vline(p *plot.Plot, name string, x, y0, y1 float64, c color.Color) {
	l, _ := plotter.NewLine(plotter.XYs{{X: x, Y: y0}, {X: x, Y: y1}})
	l.LineStyle.Color = c
	l.LineStyle.Width = vg.Points(1.5)
	l.LineStyle.Dashes = []vg.Length{vg.Points(6), vg.Points(3)}
	p.Add(l)
	p.Legend.Add(name, l)
}

// hline draws a horizontal dotted reference line at y across [x0, x1].
func hline(p *plot.Plot, name string, y, x0, x1 float64) {
	l, _ := plotter.NewLine(plotter.XYs{{X: x0, Y: y}, {X: x1, Y: y}})
	l.LineStyle.Color = color.Gray{0x70}
	l.LineStyle.Width = vg.Points(1)
	l.LineStyle.Dashes = []vg.Length{vg.Points(2), vg.Points(2)}
	p.Add(l)
	p.Legend.Add(name, l)
}

// timeTicks labels a log time axis in hours below a day and days above.
type timeTicks struct{}

func (timeTicks) Ticks(min, max float64) []plot.Tick {
	major := []struct {
		v float64
		l string
	}{{0.01, "0.01 h"}, {0.1, "0.1 h"}, {1, "1 h"}, {6, "6 h"}, {24, "1 d"}, {72, "3 d"}, {168, "7 d"},
		{672, "28 d"}, {2160, "90 d"}, {8760, "1 yr"}}
	var ts []plot.Tick
	inRange := func(v float64) bool { return v >= min*(1-1e-9) && v <= max*(1+1e-9) }
	for _, m := range major {
		if inRange(m.v) {
			ts = append(ts, plot.Tick{Value: m.v, Label: m.l})
		}
	}
	for e := math.Floor(math.Log10(min)); e <= math.Ceil(math.Log10(max)); e++ {
		for k := 1; k < 10; k++ {
			if v := float64(k) * math.Pow(10, e); inRange(v) {
				ts = append(ts, plot.Tick{Value: v})
			}
		}
	}
	sort.Slice(ts, func(i, j int) bool { return ts[i].Value < ts[j].Value })
	return ts
}

// newPlot returns a plot with the package's text sizes and a time axis.
func newPlot(title, ylabel string, opt PlotOptions) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = font.Length(15)
	p.Title.Padding = vg.Points(6)
	p.Y.Label.Text = ylabel
	for _, a := range []*plot.Axis{&p.X, &p.Y} {
		a.Label.TextStyle.Font.Size = font.Length(13)
		a.Tick.Label.Font.Size = font.Length(12)
	}
	p.Legend.TextStyle.Font.Size = font.Length(12)
	sans(p)
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.XOffs = vg.Points(6)
	p.Legend.YOffs = vg.Points(-4)
	if opt.LinearTime {
		p.X.Label.Text = "age (h)"
	} else {
		p.X.Label.Text = "age (log scale)"
		p.X.Scale = plot.LogScale{}
		p.X.Tick.Marker = timeTicks{}
	}
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{0xe0}
	g.Horizontal.Color = color.Gray{0xe0}
	p.Add(g)
	return p
}

// sans sets every text of p in Liberation Sans.
func sans(p *plot.Plot) {
	for _, f := range []*font.Font{&p.Title.TextStyle.Font, &p.X.Label.TextStyle.Font, &p.Y.Label.TextStyle.Font,
		&p.X.Tick.Label.Font, &p.Y.Tick.Label.Font, &p.Legend.TextStyle.Font} {
		f.Variant = "Sans"
	}
}

// plotLegend returns a legend in the package's style.
func plotLegend() plot.Legend {
	l := plot.NewLegend()
	l.TextStyle.Font.Size = font.Length(12)
	l.TextStyle.Font.Variant = "Sans"
	l.Padding = vg.Points(2)
	return l
}

// figure renders a drawing into PNG and SVG.
func figure(name, title string, wIn, hIn float64, drawFn func(dc draw.Canvas)) (Figure, error) {
	w, h := vg.Length(wIn)*vg.Inch, vg.Length(hIn)*vg.Inch
	f := Figure{Name: name, Title: title}
	ic := vgimg.NewWith(vgimg.UseWH(w, h), vgimg.UseDPI(plotDPI), vgimg.UseBackgroundColor(color.White))
	drawFn(draw.New(ic))
	var b bytes.Buffer
	if _, err := (vgimg.PngCanvas{Canvas: ic}).WriteTo(&b); err != nil {
		return f, fmt.Errorf("render: plot %s: %w", name, err)
	}
	f.PNG = b.Bytes()
	sc := vgsvg.New(w, h)
	drawFn(draw.New(sc))
	var sb bytes.Buffer
	if _, err := sc.WriteTo(&sb); err != nil {
		return f, fmt.Errorf("render: plot %s: %w", name, err)
	}
	f.SVG = sb.Bytes()
	return f, nil
}

// lineColour darkens light phase colours so that curves stay visible on
// white.
func lineColour(c color.RGBA) color.RGBA {
	l := 0.2126*float64(c.R) + 0.7152*float64(c.G) + 0.0722*float64(c.B)
	if l <= 150 {
		return c
	}
	k := 150 / l
	return color.RGBA{uint8(float64(c.R) * k), uint8(float64(c.G) * k), uint8(float64(c.B) * k), 0xff}
}

var dashSets = [][]vg.Length{nil, {vg.Points(7), vg.Points(3)}, {vg.Points(2), vg.Points(2)},
	{vg.Points(8), vg.Points(3), vg.Points(2), vg.Points(3)}, {vg.Points(4), vg.Points(4)}}

// RenderPlots draws every plot the series has data for, in this order:
// alpha (degree of hydration, overall and per clinker phase), heat (heat
// flow and cumulative heat), calorimetry (heat flow in linear hours,
// 0–72 h, with opt.Calorimetry's landmarks), volumes (stacked phase volume fractions),
// porosity (capillary porosity beside the Powers model), connectivity
// (connected fractions of solids and pores, with set and depercolation
// marked) and diffusivity (D/D0, log scale, only if any row has it).
// Missing values (NaN) are left out, never drawn as zero. The series must
// have a time_h column.
func RenderPlots(s *Series, opt PlotOptions) ([]Figure, error) {
	if !(opt.WC > 0 && opt.WC <= 2) {
		return nil, fmt.Errorf("render: w/c %g: must be in (0, 2]", opt.WC)
	}
	t := s.Column("time_h")
	if t == nil {
		return nil, fmt.Errorf("render: series has no time_h column (columns: %s)", strings.Join(s.Columns, ", "))
	}
	logX := !opt.LinearTime
	col := func(name string) []float64 {
		if c := s.Column(name); c != nil {
			return c
		}
		c := make([]float64, len(t))
		for i := range c {
			c[i] = math.NaN()
		}
		return c
	}
	var figs []Figure
	add := func(f Figure, err error) error {
		if err != nil {
			return err
		}
		figs = append(figs, f)
		return nil
	}

	// Degree of hydration.
	{
		p := newPlot("Degree of hydration", "degree of hydration α (–)", opt)
		any := addCurve(p, "all clinker", t, col("alpha"), curveStyle{colour: color.Black, width: 2.6}, logX, false)
		for i, k := range []string{"c3s", "c2s", "c3a", "c4af"} {
			ph := kinetics.ByKey(k)
			any = addCurve(p, ph.Name, t, col("alpha_"+k),
				curveStyle{colour: lineColour(ph.Colour), width: 1.8, dashes: dashSets[(i+1)%len(dashSets)]}, logX, false) || any
		}
		if any {
			p.Y.Min, p.Y.Max = 0, 1
			timeRange(p, t, logX)
			if err := add(figure("alpha", p.Title.Text, plotWidthIn, plotHeightIn, p.Draw)); err != nil {
				return nil, err
			}
		}
	}

	// Heat: flow above, cumulative below, one time axis.
	{
		p1 := newPlot("Heat of hydration", "heat flow (mW/g)", opt)
		a1 := addCurve(p1, "heat flow", t, col("heat_flow_mw_per_g"), curveStyle{colour: color.RGBA{0xb0, 0x30, 0x20, 0xff}, width: 2}, logX, false)
		p1.Legend = plotLegend()
		p1.X.Label.Text = ""
		p2 := newPlot("", "cumulative heat (J/g)", opt)
		a2 := addCurve(p2, "cumulative heat", t, col("heat_j_per_g"), curveStyle{colour: color.RGBA{0x20, 0x40, 0x90, 0xff}, width: 2}, logX, false)
		p2.Legend = plotLegend()
		if a1 || a2 {
			p1.Y.Min, p2.Y.Min = math.Min(0, p1.Y.Min), 0
			timeRange(p1, t, logX)
			timeRange(p2, t, logX)
			if err := add(figure("heat", "Heat of hydration", plotWidthIn, 7, func(dc draw.Canvas) {
				cs := plot.Align([][]*plot.Plot{{p1}, {p2}}, draw.Tiles{Rows: 2, Cols: 1, PadY: vg.Points(10), PadTop: vg.Points(4), PadBottom: vg.Points(4), PadLeft: vg.Points(4), PadRight: vg.Points(10)}, dc)
				p1.Draw(cs[0][0])
				p2.Draw(cs[1][0])
			})); err != nil {
				return nil, err
			}
		}
	}

	// Heat flow in linear hours, as calorimetry reports draw it.
	if f, ok, err := calorimetryFigure(t, col("heat_flow_mw_per_g"), opt.Calorimetry); err != nil {
		return nil, err
	} else if ok {
		figs = append(figs, f)
	}

	// Phase volumes, stacked.
	if f, ok, err := volumePlot(s, t, opt); err != nil {
		return nil, err
	} else if ok {
		figs = append(figs, f)
	}

	// Capillary porosity and the Powers model.
	{
		p := newPlot("Capillary porosity (fraction of the paste volume)", "volume fraction of the paste (–)", opt)
		any := addCurve(p, "capillary porosity (model)", t, col("capillary_porosity"), curveStyle{colour: color.RGBA{0x20, 0x40, 0x90, 0xff}, width: 2.4}, logX, false)
		any = addCurve(p, "water-filled porosity (model)", t, col("water_filled_porosity"), curveStyle{colour: color.RGBA{0x30, 0x90, 0xc0, 0xff}, width: 1.8, dashes: dashSets[1]}, logX, false) || any
		alpha := col("alpha")
		pw := make([]float64, len(alpha))
		for i, a := range alpha {
			pw[i] = math.NaN()
			if !math.IsNaN(a) {
				pw[i] = PowersCapillaryPorosity(opt.WC, a)
			}
		}
		any = addCurve(p, fmt.Sprintf("Powers model, w/c %.2f", opt.WC), t, pw, curveStyle{colour: color.Black, width: 1.6, dashes: dashSets[3]}, logX, false) || any
		if any {
			p.Y.Min = 0
			p.Y.Max = math.Max(p.Y.Max, 0.2)
			timeRange(p, t, logX)
			hline(p, "pore depercolation ≈ 0.18 (Garboczi & Bentz 1992)", 0.18, p.X.Min, p.X.Max)
			p.Legend.Top = false
			p.Legend.YOffs = vg.Points(4)
			if err := add(figure("porosity", p.Title.Text, plotWidthIn, plotHeightIn, p.Draw)); err != nil {
				return nil, err
			}
		}
	}

	// Connectivity with set and depercolation.
	{
		p := newPlot("Connectivity", "connected fraction (–)", opt)
		any := addCurve(p, "solids connected", t, col("solids_connected_fraction"), curveStyle{colour: color.RGBA{0x8a, 0x50, 0x10, 0xff}, width: 2.2}, logX, false)
		any = addCurve(p, "pores connected", t, col("pores_connected_fraction"), curveStyle{colour: color.RGBA{0x20, 0x40, 0x90, 0xff}, width: 2.2, dashes: dashSets[1]}, logX, false) || any
		if any {
			p.Y.Min, p.Y.Max = 0, 1.05
			timeRange(p, t, logX)
			if x := opt.SetTimeH; x > 0 {
				vline(p, fmt.Sprintf("model set point %s (not a Vicat time)", HoursMinutes(x)), x, 0, 1.05, color.RGBA{0x8a, 0x50, 0x10, 0xff})
			}
			if x := opt.DepercolationTimeH; x > 0 {
				vline(p, fmt.Sprintf("pore depercolation %s", fmtAge(x)), x, 0, 1.05, color.RGBA{0x20, 0x40, 0x90, 0xff})
			}
			p.Legend.Top = false
			p.Legend.YOffs = vg.Points(4)
			p.Legend.Left = true
			if err := add(figure("connectivity", p.Title.Text, plotWidthIn, plotHeightIn, p.Draw)); err != nil {
				return nil, err
			}
		}
	}

	// Relative diffusivity of the pore network.
	{
		p := newPlot("Relative diffusivity of the pore network", "D/D0 (–, log scale)", opt)
		p.Y.Scale = plot.LogScale{}
		p.Y.Tick.Marker = plot.LogTicks{Prec: -1}
		if addCurve(p, "D/D0 (model)", t, col("rel_diffusivity"), curveStyle{colour: color.RGBA{0x20, 0x40, 0x90, 0xff}, width: 2.2}, logX, true) {
			timeRange(p, t, logX)
			hline(p, "C-S-H gel ≈ 1/400 (Garboczi & Bentz 1992)", 1.0/400, p.X.Min, p.X.Max)
			p.Y.Min = math.Min(p.Y.Min, 1.0/1000)
			p.Y.Max = math.Max(p.Y.Max, 1)
			p.Legend.Top = false
			p.Legend.YOffs = vg.Points(4)
			if err := add(figure("diffusivity", p.Title.Text, plotWidthIn, plotHeightIn, p.Draw)); err != nil {
				return nil, err
			}
		}
	}
	return figs, nil
}

// volumePlot draws the vol_<phase> columns (fractions of the paste volume)
// as stacked areas with the legend beside the plot. Rows with a missing time or any missing volume are left
// out.
func volumePlot(s *Series, t []float64, opt PlotOptions) (Figure, bool, error) {
	type band struct {
		key   string
		label string
		c     color.RGBA
		v     []float64
	}
	var bands []band
	for _, name := range s.Columns {
		key, ok := strings.CutPrefix(name, "vol_")
		if !ok {
			continue
		}
		b := band{key: key, label: key, v: s.Column(name)}
		if ph := kinetics.ByKey(key); ph != nil {
			b.label, b.c = ph.Name, ph.Colour
		} else {
			b.c = FallbackColour(uint8(len(bands) + 200))
		}
		bands = append(bands, b)
	}
	if len(bands) == 0 {
		return Figure{}, false, nil
	}
	var rows []int
	for i := range t {
		ok := !math.IsNaN(t[i]) && (opt.LinearTime || t[i] > 0)
		for _, b := range bands {
			ok = ok && !math.IsNaN(b.v[i])
		}
		if ok {
			rows = append(rows, i)
		}
	}
	if len(rows) == 0 {
		return Figure{}, false, nil
	}
	p := newPlot("Phase volumes (fraction of the paste volume)", "volume fraction of the paste (–)", opt)
	leg := plotLegend()
	leg.Padding = vg.Points(4)
	leg.Top, leg.Left = true, true
	lower := make([]float64, len(rows))
	var entries []struct {
		name string
		th   plot.Thumbnailer
	}
	for _, b := range bands {
		upper := make([]float64, len(rows))
		nonzero := false
		for k, i := range rows {
			upper[k] = lower[k] + b.v[i]
			nonzero = nonzero || b.v[i] > 0
		}
		if nonzero {
			var ring plotter.XYs
			for k, i := range rows {
				ring = append(ring, plotter.XY{X: t[i], Y: upper[k]})
			}
			for k := len(rows) - 1; k >= 0; k-- {
				ring = append(ring, plotter.XY{X: t[rows[k]], Y: lower[k]})
			}
			poly, err := plotter.NewPolygon(ring)
			if err != nil {
				return Figure{}, false, fmt.Errorf("render: volume band %s: %w", b.key, err)
			}
			poly.Color = b.c
			poly.LineStyle.Width = vg.Points(0.5)
			poly.LineStyle.Color = color.Gray{0xff}
			p.Add(poly)
			entries = append(entries, struct {
				name string
				th   plot.Thumbnailer
			}{b.label, poly})
		}
		lower = upper
	}
	// Legend from the top band down, as the bands are stacked.
	for k := len(entries) - 1; k >= 0; k-- {
		leg.Add(entries[k].name, entries[k].th)
	}
	top := 0.0
	for _, v := range lower {
		top = math.Max(top, v)
	}
	p.Y.Min, p.Y.Max = 0, math.Max(1, top)
	timeRange(p, t, !opt.LinearTime)
	p.Legend = plotLegend()
	// The legend column is as wide as its longest entry needs (thumbnail,
	// a space, the text) plus a margin, and at least 2.1 in.
	legW := vg.Length(2.1) * vg.Inch
	for _, e := range entries {
		legW = max(legW, leg.ThumbnailWidth+leg.TextStyle.Width(" "+e.name)+vg.Points(16))
	}
	f, err := figure("volumes", p.Title.Text, plotWidthIn+2, plotHeightIn+1, func(dc draw.Canvas) {
		p.Draw(draw.Crop(dc, 0, -legW, 0, 0))
		leg.Draw(draw.Crop(dc, dc.Max.X-dc.Min.X-legW+vg.Points(10), 0, 0, -vg.Points(30)))
	})
	return f, err == nil, err
}

// WritePlots renders the plots and writes each as name.png and name.svg
// into dir, returning the paths written.
func WritePlots(dir string, s *Series, opt PlotOptions) ([]string, error) {
	figs, err := RenderPlots(s, opt)
	if err != nil {
		return nil, err
	}
	var out []string
	for _, f := range figs {
		for _, x := range []struct {
			ext string
			b   []byte
		}{{".png", f.PNG}, {".svg", f.SVG}} {
			path := filepath.Join(dir, f.Name+x.ext)
			b := x.b
			if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(b); return err }); err != nil {
				return out, err
			}
			out = append(out, path)
		}
	}
	return out, nil
}
