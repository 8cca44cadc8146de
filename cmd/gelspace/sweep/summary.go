package sweep

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"
	"gonum.org/v1/gonum/stat"
	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/plotutil"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/render"
)

// Output is one result column of the summaries.
type Output struct {
	Name  string // column name (units in the name)
	Label string // axis label
	get   func(s *run.Summary) float64
}

// Ages (days) of the α and heat columns.
var sweepAgesD = []float64{1, 3, 7, 28}

// Outputs lists the result columns of the summaries, in order.
func Outputs() []Output {
	opt := func(p *float64) float64 {
		if p == nil {
			return math.NaN()
		}
		return *p
	}
	outs := []Output{
		{"set_time_h", "set time, h", func(s *run.Summary) float64 { return opt(s.SetTimeH) }},
		{"set_alpha", "degree of hydration at set", func(s *run.Summary) float64 { return opt(s.SetAlpha) }},
		{"depercolation_time_h", "capillary-pore depercolation time, h", func(s *run.Summary) float64 { return opt(s.DepercolationTimeH) }},
		{"main_peak_time_h", "time of the main heat-flow peak, h", func(s *run.Summary) float64 { return opt(s.Calorimetry.MainPeakTimeH) }},
		{"main_peak_mw_per_g", "main heat-flow peak, mW/g", func(s *run.Summary) float64 { return opt(s.Calorimetry.MainPeakMWPerG) }},
	}
	for _, d := range sweepAgesD {
		at := func(s *run.Summary) *run.AgeValues {
			for i := range s.AtAge {
				if math.Abs(s.AtAge[i].Days-d) < 1e-6 {
					return &s.AtAge[i]
				}
			}
			return nil
		}
		outs = append(outs,
			Output{fmt.Sprintf("alpha_%gd", d), fmt.Sprintf("degree of hydration at %g d", d), func(s *run.Summary) float64 {
				if a := at(s); a != nil {
					return a.Alpha
				}
				return math.NaN()
			}},
			Output{fmt.Sprintf("heat_j_per_g_%gd", d), fmt.Sprintf("heat at %g d, J/g", d), func(s *run.Summary) float64 {
				if a := at(s); a != nil {
					return a.HeatJPerG
				}
				return math.NaN()
			}})
	}
	outs = append(outs,
		Output{"ch_g_per_100g_final", "CH at the end, g per 100 g of binder", func(s *run.Summary) float64 { return s.Final.CHGPer100G }},
		Output{"capillary_porosity_final", "capillary porosity at the end", func(s *run.Summary) float64 { return s.Final.CapillaryPorosity }},
		Output{"rel_diffusivity_final", "D/D0 at the end (mean of x, y, z)", func(s *run.Summary) float64 {
			for _, d := range s.RelDiffusivity {
				if math.Abs(d.TimeH-s.Final.TimeH) < 1e-9 {
					return (d.Rel[0] + d.Rel[1] + d.Rel[2]) / 3
				}
			}
			return math.NaN()
		}},
		Output{"rel_diffusivity_28d", "D/D0 at 28 d (mean of x, y, z)", func(s *run.Summary) float64 {
			for _, d := range s.RelDiffusivity {
				if math.Abs(d.TimeH-672) < 1e-9 {
					return (d.Rel[0] + d.Rel[1] + d.Rel[2]) / 3
				}
			}
			return math.NaN()
		}},
		Output{"rel_diffusivity_capillary_final", "D/D0 of the capillary pores alone at the end", func(s *run.Summary) float64 {
			for _, d := range s.RelDiffusivity {
				if math.Abs(d.TimeH-s.Final.TimeH) < 1e-9 && d.RelCapillary != nil {
					return (d.RelCapillary[0] + d.RelCapillary[1] + d.RelCapillary[2]) / 3
				}
			}
			return math.NaN()
		}},
		Output{"psd_d50_um", "d50 of the PSD, µm", func(s *run.Summary) float64 { return s.Mix.PSDStats.D50UM }},
		Output{"psd_surface_m2_per_kg", "specific surface from the PSD (spheres, not Blaine), m²/kg", func(s *run.Summary) float64 {
			return s.Mix.PSDStats.SurfaceSpheresM2PerKg
		}},
		Output{"carried_fraction", "powder carried outside the box (coarse grains), mass fraction", func(s *run.Summary) float64 { return s.Carried.MassFraction }})
	return outs
}

// Point statuses in summary.csv.
const (
	StatusOK      = "ok"
	StatusFailed  = "failed"
	StatusMissing = "missing"
)

// Row is one point and replicate.
type Row struct {
	P      PlanPoint
	Status string
	Vals   []float64 // per output; NaN when absent
}

// Collect reads every point folder of pl in dir. A point finished by
// gelspace run (plan mode) without a marker counts as complete when its
// outputs are all there and its run.json records the point's config; its
// marker is then written.
func Collect(dir string, pl *Plan) ([]Row, error) {
	outs := Outputs()
	rows := make([]Row, len(pl.Points))
	for i, p := range pl.Points {
		pd := filepath.Join(dir, PointsDir, p.Name)
		r := Row{P: p, Status: StatusMissing, Vals: make([]float64, len(outs))}
		for k := range r.Vals {
			r.Vals[k] = math.NaN()
		}
		complete := pointComplete(pd)
		if !complete && finishedByRun(pd) {
			if err := writeMarker(pd, 0); err != nil {
				return nil, err
			}
			complete = true
		}
		switch {
		case complete:
			data, err := readSmall(filepath.Join(pd, "summary.json"))
			if err != nil {
				return nil, err
			}
			var s run.Summary
			if err := json.Unmarshal(data, &s); err != nil {
				return nil, &configs.InputError{File: filepath.Join(pd, "summary.json"), Msg: "malformed run summary: " + err.Error()}
			}
			r.Status = StatusOK
			for k, o := range outs {
				r.Vals[k] = o.get(&s)
			}
		case fileExists(filepath.Join(pd, PointErrorFile)):
			r.Status = StatusFailed
		}
		rows[i] = r
	}
	return rows, nil
}

// finishedByRun reports whether gelspace run finished the point folder
// with its present config: every output written (phases.csv is the last
// without images, report.html the last with them), no checkpoint left,
// run.json marked complete, and run.json's config equal to config.toml's.
func finishedByRun(pd string) bool {
	last := "phases.csv"
	if fileExists(filepath.Join(pd, "report.html")) || fileExists(filepath.Join(pd, "slices")) {
		last = "report.html"
	}
	for _, f := range []string{"summary.json", "series.csv", last} {
		if !fileExists(filepath.Join(pd, f)) {
			return false
		}
	}
	if fileExists(filepath.Join(pd, run.CheckpointFile)) {
		return false
	}
	data, err := readSmall(filepath.Join(pd, run.ManifestFile))
	if err != nil {
		return false
	}
	var man run.Manifest
	if json.Unmarshal(data, &man) != nil || man.Version != run.Version || !man.Complete {
		return false
	}
	raw, err := configs.LoadRaw(filepath.Join(pd, PointConfigFile))
	if err != nil {
		return false
	}
	text, err := toml.Marshal(raw.Tree)
	return err == nil && string(text) == man.ConfigText
}

func fileExists(p string) bool { _, err := os.Stat(p); return err == nil }

// fmtCell formats a number for the summaries: empty for NaN, 10
// significant digits otherwise.
func fmtCell(v float64) string {
	if math.IsNaN(v) {
		return ""
	}
	return strconv.FormatFloat(v, 'g', 10, 64)
}

func csvCell(s string) string {
	if strings.ContainsAny(s, ",\"\n") {
		return `"` + strings.ReplaceAll(s, `"`, `""`) + `"`
	}
	return s
}

// writeSummaryCSV writes summary.csv.
func writeSummaryCSV(w io.Writer, pl *Plan, rows []Row) error {
	var b bytes.Buffer
	head := []string{"point", "replicate", "folder"}
	for _, a := range pl.Axes {
		head = append(head, csvCell(a.Key))
	}
	head = append(head, "seed", "status")
	for _, o := range Outputs() {
		head = append(head, o.Name)
	}
	b.WriteString(strings.Join(head, ",") + "\n")
	for _, r := range rows {
		cells := []string{strconv.Itoa(r.P.Point), strconv.Itoa(r.P.Replicate), r.P.Name}
		for ai, a := range pl.Axes {
			cells = append(cells, csvCell(a.Values[r.P.Values[ai]]))
		}
		cells = append(cells, strconv.FormatInt(r.P.Seed, 10), r.Status)
		for _, v := range r.Vals {
			cells = append(cells, fmtCell(v))
		}
		b.WriteString(strings.Join(cells, ",") + "\n")
	}
	_, err := w.Write(b.Bytes())
	return err
}

// replicateStats are one output's statistics over a point's replicates.
type replicateStats struct {
	N                int     // replicates with a value (e.g. that depercolated)
	Mean, SD, CI95   float64 // NaN when N is too small (mean: N < 1; SD, CI: N < 2)
	Lo95, Hi95, TQ95 float64
}

// statsOf returns the mean, the sample standard deviation and the 95 %
// confidence interval of the mean, mean ± t·sd/√n, with t the 0.975
// quantile of Student's t distribution with n − 1 degrees of freedom
// (gonum/stat/distuv.StudentsT). NaN values (a replicate that did not set
// or depercolate) are left out, not averaged as zeros.
func statsOf(vals []float64) replicateStats {
	var x []float64
	for _, v := range vals {
		if !math.IsNaN(v) {
			x = append(x, v)
		}
	}
	s := replicateStats{N: len(x), Mean: math.NaN(), SD: math.NaN(), CI95: math.NaN(), Lo95: math.NaN(), Hi95: math.NaN(), TQ95: math.NaN()}
	if s.N == 0 {
		return s
	}
	s.Mean = stat.Mean(x, nil)
	if s.N < 2 {
		return s
	}
	s.SD = stat.StdDev(x, nil)
	s.TQ95 = distuv.StudentsT{Mu: 0, Sigma: 1, Nu: float64(s.N - 1)}.Quantile(0.975)
	s.CI95 = s.TQ95 * s.SD / math.Sqrt(float64(s.N))
	s.Lo95, s.Hi95 = s.Mean-s.CI95, s.Mean+s.CI95
	return s
}

// pointStats groups rows by point (rows are in point order) and returns,
// per point, its first row and the statistics of every output.
func pointStats(rows []Row) (first []Row, stats [][]replicateStats, runs []int) {
	nOut := len(Outputs())
	for i := 0; i < len(rows); {
		j := i
		for j < len(rows) && rows[j].P.Point == rows[i].P.Point {
			j++
		}
		ok := 0
		st := make([]replicateStats, nOut)
		for k := range nOut {
			var v []float64
			for _, r := range rows[i:j] {
				if r.Status == StatusOK {
					v = append(v, r.Vals[k])
				}
			}
			st[k] = statsOf(v)
		}
		for _, r := range rows[i:j] {
			if r.Status == StatusOK {
				ok++
			}
		}
		first, stats, runs = append(first, rows[i]), append(stats, st), append(runs, ok)
		i = j
	}
	return first, stats, runs
}

// writeStatsCSV writes summary_stats.csv: per point, the axis values, the
// replicates planned and finished, and per output <name>_n (replicates
// with a value: for depercolation_time_h, how many depercolated),
// _mean, _sd and _ci95 (half-width of the 95 % interval: mean ± ci95).
func writeStatsCSV(w io.Writer, pl *Plan, rows []Row) error {
	var b bytes.Buffer
	head := []string{"point"}
	for _, a := range pl.Axes {
		head = append(head, csvCell(a.Key))
	}
	head = append(head, "replicates", "replicates_ok")
	for _, o := range Outputs() {
		head = append(head, o.Name+"_n", o.Name+"_mean", o.Name+"_sd", o.Name+"_ci95")
	}
	first, stats, runs := pointStats(rows)
	ref := plainReference(pl, first)
	if ref != nil {
		head = append(head, "ch_vs_plain_final")
	}
	b.WriteString(strings.Join(head, ",") + "\n")
	chCol := outputIndex("ch_g_per_100g_final")
	for i, r := range first {
		cells := []string{strconv.Itoa(r.P.Point)}
		for ai, a := range pl.Axes {
			cells = append(cells, csvCell(a.Values[r.P.Values[ai]]))
		}
		cells = append(cells, strconv.Itoa(pl.Replicates), strconv.Itoa(runs[i]))
		for _, s := range stats[i] {
			cells = append(cells, strconv.Itoa(s.N), fmtCell(s.Mean), fmtCell(s.SD), fmtCell(s.CI95))
		}
		if ref != nil {
			v := math.NaN()
			if j := ref[i]; j >= 0 {
				v = stats[i][chCol].Mean / stats[j][chCol].Mean
			}
			cells = append(cells, fmtCell(v))
		}
		b.WriteString(strings.Join(cells, ",") + "\n")
	}
	_, err := w.Write(b.Bytes())
	return err
}

// outputIndex returns the index of the output named name in Outputs.
func outputIndex(name string) int {
	for k, o := range Outputs() {
		if o.Name == name {
			return k
		}
	}
	panic("sweep: no output " + name)
}

// plainReference finds, for a sweep over SCM contents, each point's plain
// cement: the point with every scm.N.mass_percent axis at 0 and the other
// axes as the point's. It returns, per point in first, the index in first
// of its reference (−1 when there is none), or nil when no axis is an SCM
// content with a 0 % value.
func plainReference(pl *Plan, first []Row) []int {
	isSCM := make([]bool, len(pl.Axes))
	any := false
	for ai, a := range pl.Axes {
		if strings.HasPrefix(a.Key, "scm.") && strings.HasSuffix(a.Key, ".mass_percent") {
			for _, v := range a.Values {
				if f, err := strconv.ParseFloat(v, 64); err == nil && f == 0 {
					isSCM[ai], any = true, true
				}
			}
		}
	}
	if !any {
		return nil
	}
	zero := func(ai, vi int) bool {
		f, err := strconv.ParseFloat(pl.Axes[ai].Values[vi], 64)
		return err == nil && f == 0
	}
	ref := make([]int, len(first))
	for i, r := range first {
		ref[i] = -1
		for j, q := range first {
			ok := true
			for ai := range pl.Axes {
				if isSCM[ai] {
					ok = ok && zero(ai, q.P.Values[ai])
				} else {
					ok = ok && q.P.Values[ai] == r.P.Values[ai]
				}
			}
			if ok {
				ref[i] = j
				break
			}
		}
	}
	return ref
}

// lineFor returns the plot line of label, adding a new one to lines (and
// byLabel) the first time.
func lineFor(byLabel map[string]*plotLine, lines *[]*plotLine, label string) *plotLine {
	l := byLabel[label]
	if l == nil {
		l = &plotLine{label: label}
		byLabel[label] = l
		*lines = append(*lines, l)
	}
	return l
}

// WriteSummaries writes summary.csv, summary_stats.csv and the plots
// into dir.
func WriteSummaries(dir string, pl *Plan, rows []Row) error {
	if err := render.WriteFileAtomic(filepath.Join(dir, "summary.csv"), func(w io.Writer) error { return writeSummaryCSV(w, pl, rows) }); err != nil {
		return err
	}
	if err := render.WriteFileAtomic(filepath.Join(dir, "summary_stats.csv"), func(w io.Writer) error { return writeStatsCSV(w, pl, rows) }); err != nil {
		return err
	}
	return writeSweepPlots(filepath.Join(dir, "plots"), pl, rows)
}

// plotLine is one line of a summary plot: the points sharing the values
// of every axis but the first.
type plotLine struct {
	label   string
	xys     plotter.XYs
	errs    plotter.YErrors
	partial plotter.XYs // points where only some replicates have a value
}

// summaryLines groups the point statistics of output k into lines over
// the first axis (x: its numeric value, or its position when it is not a
// number).
func summaryLines(pl *Plan, first []Row, stats [][]replicateStats, runs []int, k int) (lines []*plotLine, nominal bool) {
	ax := pl.Axes[0]
	for _, n := range ax.Num {
		if n == nil {
			nominal = true
		}
	}
	byLabel := map[string]*plotLine{}
	for i, r := range first {
		var parts []string
		for ai := 1; ai < len(pl.Axes); ai++ {
			if pl.Axes[ai].Zip && pl.Axes[0].Zip || len(pl.Axes[ai].Values) < 2 {
				continue // varies with the first axis, or does not vary
			}
			parts = append(parts, pl.Axes[ai].Key+" = "+pl.Axes[ai].Values[r.P.Values[ai]])
		}
		l := lineFor(byLabel, &lines, strings.Join(parts, ", "))
		s := stats[i][k]
		if math.IsNaN(s.Mean) {
			continue
		}
		vi := r.P.Values[0]
		x := float64(vi)
		if !nominal {
			x = *ax.Num[vi]
		}
		e := s.CI95
		if math.IsNaN(e) {
			e = 0
		}
		l.xys = append(l.xys, plotter.XY{X: x, Y: s.Mean})
		l.errs = append(l.errs, struct{ Low, High float64 }{e, e})
		if s.N < runs[i] {
			l.partial = append(l.partial, plotter.XY{X: x, Y: s.Mean})
		}
	}
	return lines, nominal
}

// errPoints joins points and their error bars for plotter.NewYErrorBars.
type errPoints struct {
	plotter.XYs
	plotter.YErrors
}

// writeSweepPlots draws each output that has a value at any point against
// the first swept axis, PNG and SVG.
func writeSweepPlots(dir string, pl *Plan, rows []Row) error {
	if len(pl.Axes) == 0 {
		return nil
	}
	first, stats, runs := pointStats(rows)
	xlo, xhi := math.Inf(1), math.Inf(-1)
	for _, n := range pl.Axes[0].Num {
		if n != nil {
			xlo, xhi = math.Min(xlo, *n), math.Max(xhi, *n)
		}
	}
	for k, o := range Outputs() {
		lines, nominal := summaryLines(pl, first, stats, runs, k)
		if err := savePlot(dir, o.Name, o.Label, pl.Axes[0].Key, lines, nominal, pl.Axes[0].Values, xlo, xhi); err != nil {
			return err
		}
	}
	if !sweepsPSD(pl) {
		return nil
	}
	// The PSD varies: each output against the PSD's d50 and its specific
	// surface as well.
	outs := Outputs()
	for _, by := range []struct{ col, suffix, label string }{
		{"psd_d50_um", "_vs_d50", "d50 of the PSD, µm"},
		{"psd_surface_m2_per_kg", "_vs_surface", "specific surface from the PSD (spheres, not Blaine), m²/kg"},
	} {
		kx := -1
		for k, o := range outs {
			if o.Name == by.col {
				kx = k
			}
		}
		for k, o := range outs {
			if k == kx || strings.HasPrefix(o.Name, "psd_") {
				continue
			}
			lines, lo, hi := psdLines(pl, first, stats, runs, k, kx)
			if err := savePlot(dir, o.Name+by.suffix, o.Label, by.label, lines, false, nil, lo, hi); err != nil {
				return err
			}
		}
	}
	return nil
}

// savePlot draws the lines of one output (mean ± 95 % CI) against x into
// dir/name.png and .svg; nothing when no line has a value.
func savePlot(dir, name, label, xlabel string, lines []*plotLine, nominal bool, xvalues []string, xlo, xhi float64) error {
	has := false
	for _, l := range lines {
		has = has || len(l.xys) > 0
	}
	if !has {
		return nil
	}
	p := plot.New()
	p.Title.Text = label + " (mean ± 95 % CI)"
	p.X.Label.Text = xlabel
	p.Y.Label.Text = label
	p.Add(plotter.NewGrid())
	if nominal {
		p.NominalX(xvalues...)
	}
	partial := false
	var rings []plot.Plotter
	for i, l := range lines {
		if len(l.xys) == 0 {
			continue
		}
		if len(l.partial) > 0 {
			partial = true
			ring, err := plotter.NewScatter(l.partial)
			if err != nil {
				return err
			}
			ring.Shape = draw.CircleGlyph{}
			ring.Color = color.White
			ring.Radius = vg.Points(1.5)
			rings = append(rings, ring) // drawn over the filled points
		}
		c := plotutil.Color(i)
		line, pts, err := plotter.NewLinePoints(l.xys)
		if err != nil {
			return err
		}
		line.Color = c
		line.Width = vg.Points(1.5)
		pts.Color = c
		pts.Shape = draw.CircleGlyph{}
		pts.Radius = vg.Points(2.5)
		eb, err := plotter.NewYErrorBars(errPoints{l.xys, l.errs})
		if err != nil {
			return err
		}
		eb.Color = c
		eb.LineStyle.Width = vg.Points(1)
		p.Add(line, pts, eb)
		if l.label != "" {
			p.Legend.Add(l.label, line, pts)
		}
	}
	p.Add(rings...)
	if partial {
		p.Title.Text += "; hollow: not every replicate has a value (summary_stats.csv: _n)"
	}
	p.Legend.Top = true
	p.Legend.Left = true
	p.Legend.TextStyle.Color = color.Black
	// room for the error bars at the ends and for the legend on top
	if !nominal {
		pad := 0.05 * (xhi - xlo)
		if pad == 0 {
			pad = 0.05 * math.Max(math.Abs(xlo), 1)
		}
		p.X.Min, p.X.Max = xlo-pad, xhi+pad
	}
	span := p.Y.Max - p.Y.Min
	if span == 0 {
		span = math.Max(1e-3, math.Abs(p.Y.Max))
	}
	p.Y.Max += 0.08 * span * float64(len(lines)+1)
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for _, ext := range []string{"png", "svg"} {
		wt, err := p.WriterTo(16*vg.Centimeter, 11*vg.Centimeter, ext)
		if err != nil {
			return err
		}
		if err := render.WriteFileAtomic(filepath.Join(dir, name+"."+ext), func(w io.Writer) error { _, err := wt.WriteTo(w); return err }); err != nil {
			return err
		}
	}
	return nil
}

// sweepsPSD reports whether an axis of the plan varies the PSD.
func sweepsPSD(pl *Plan) bool {
	for _, a := range pl.Axes {
		if strings.HasPrefix(a.Key, "psd.") && len(a.Values) > 1 {
			return true
		}
	}
	return false
}

// psdLines groups the point statistics of output k into lines against the
// point's mean of output kx (a PSD statistic), one line per combination
// of the axes that do not vary the PSD, sorted by x; lo and hi bound x.
func psdLines(pl *Plan, first []Row, stats [][]replicateStats, runs []int, k, kx int) (lines []*plotLine, lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	byLabel := map[string]*plotLine{}
	for i, r := range first {
		var parts []string
		for ai, a := range pl.Axes {
			if strings.HasPrefix(a.Key, "psd.") || len(a.Values) < 2 {
				continue
			}
			parts = append(parts, a.Key+" = "+a.Values[r.P.Values[ai]])
		}
		l := lineFor(byLabel, &lines, strings.Join(parts, ", "))
		sy, sx := stats[i][k], stats[i][kx]
		if math.IsNaN(sy.Mean) || math.IsNaN(sx.Mean) {
			continue
		}
		e := sy.CI95
		if math.IsNaN(e) {
			e = 0
		}
		lo, hi = math.Min(lo, sx.Mean), math.Max(hi, sx.Mean)
		l.xys = append(l.xys, plotter.XY{X: sx.Mean, Y: sy.Mean})
		l.errs = append(l.errs, struct{ Low, High float64 }{e, e})
		if sy.N < runs[i] {
			l.partial = append(l.partial, plotter.XY{X: sx.Mean, Y: sy.Mean})
		}
	}
	for _, l := range lines {
		idx := make([]int, len(l.xys))
		for j := range idx {
			idx[j] = j
		}
		sort.Slice(idx, func(a, b int) bool { return l.xys[idx[a]].X < l.xys[idx[b]].X })
		xys, errs := make(plotter.XYs, len(idx)), make(plotter.YErrors, len(idx))
		for j, o := range idx {
			xys[j], errs[j] = l.xys[o], l.errs[o]
		}
		l.xys, l.errs = xys, errs
	}
	return lines, lo, hi
}
