package render

import (
	"bytes"
	"encoding/xml"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestReadSeriesCSV(t *testing.T) {
	in := "time_h, alpha ,heat_j_per_g\n0.5,0.01,\n1,NaN,3.5\n# a comment\n2,0.2,7\n"
	s, err := ReadSeriesCSV(strings.NewReader(in))
	if err != nil {
		t.Fatal(err)
	}
	if got := strings.Join(s.Columns, "|"); got != "time_h|alpha|heat_j_per_g" {
		t.Errorf("columns %s", got)
	}
	if len(s.Rows) != 3 || !math.IsNaN(s.Rows[0][2]) || !math.IsNaN(s.Rows[1][1]) || s.Rows[2][2] != 7 {
		t.Errorf("rows %v", s.Rows)
	}
	// At interpolates between present values and skips missing ones.
	if v, ok := s.At("alpha", 1.5); !ok || math.Abs(v-(0.01+0.19*1.0/1.5)) > 1e-12 {
		t.Errorf("At(alpha, 1.5) = %v, %v", v, ok)
	}
	if _, ok := s.At("alpha", 3); ok {
		t.Error("At past the last row reported a value")
	}
	for _, bad := range []string{"", "time_h,time_h\n1,2\n", "time_h,alpha\n1,x\n", "time_h,alpha\n1,2,3\n"} {
		if _, err := ReadSeriesCSV(strings.NewReader(bad)); err == nil {
			t.Errorf("%q: no error", bad)
		}
	}
}

func TestPresentSkipsMissing(t *testing.T) {
	nan := math.NaN()
	xs := []float64{0, 0.1, 1, 2, 3, 4}
	ys := []float64{1, nan, 0.5, nan, 0.2, 0.1}
	pts, gaps := present(xs, ys, true, false)
	// x = 0 is dropped on a log axis; NaNs are dropped, never made 0.
	want := []float64{0.5, 0.2, 0.1}
	if len(pts) != len(want) || !gaps {
		t.Fatalf("points %v gaps %v; want y %v with gaps", pts, gaps, want)
	}
	for i, p := range pts {
		if p.Y != want[i] {
			t.Errorf("point %d y %g; want %g", i, p.Y, want[i])
		}
	}
	if _, gaps := present([]float64{1, 2, 3}, []float64{nan, 1, 2}, false, false); gaps {
		t.Error("leading NaN counted as a gap")
	}
}

func TestPowersCapillaryPorosity(t *testing.T) {
	// Mindess, Young & Darwin (2003) — partly confirmed:
	// at α = 0 the porosity is w/c / (w/c + 0.32); at w/c 0.5 and α = 1 it
	// is 0.14 / 0.82.
	if got := PowersCapillaryPorosity(0.5, 0); math.Abs(got-0.5/0.82) > 1e-12 {
		t.Errorf("α 0: %g", got)
	}
	if got := PowersCapillaryPorosity(0.5, 1); math.Abs(got-0.14/0.82) > 1e-12 {
		t.Errorf("α 1: %g", got)
	}
	if got := PowersCapillaryPorosity(0.3, 1); got != 0 {
		t.Errorf("w/c 0.3, α 1: %g; want clamped to 0", got)
	}
}

func TestRenderPlots(t *testing.T) {
	s := synthSeries(60, 0.45)
	figs, err := RenderPlots(s, PlotOptions{WC: 0.45, SetTimeH: 5, DepercolationTimeH: math.NaN()})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, f := range figs {
		names = append(names, f.Name)
		img, err := png.Decode(bytes.NewReader(f.PNG))
		if err != nil {
			t.Fatalf("%s png: %v", f.Name, err)
		}
		if w := img.Bounds().Dx(); w < 700 {
			t.Errorf("%s is %d px wide; want ≥ 700", f.Name, w)
		}
		d := xml.NewDecoder(bytes.NewReader(f.SVG))
		for {
			if _, err := d.Token(); err == io.EOF {
				break
			} else if err != nil {
				t.Fatalf("%s svg: %v", f.Name, err)
			}
		}
	}
	if got := strings.Join(names, ","); got != "alpha,heat,calorimetry,volumes,porosity,connectivity,diffusivity" {
		t.Errorf("plots %s", got)
	}
	// Without any diffusivity there is no D/D0 plot; linear time works.
	j := s.Index("rel_diffusivity")
	for _, r := range s.Rows {
		r[j] = math.NaN()
	}
	figs, err = RenderPlots(s, PlotOptions{WC: 0.45, LinearTime: true})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range figs {
		if f.Name == "diffusivity" {
			t.Error("diffusivity plot drawn with no values")
		}
	}
	if _, err := RenderPlots(s, PlotOptions{}); err == nil || !strings.Contains(err.Error(), "(0, 2]") {
		t.Errorf("w/c 0: err %v", err)
	}
	if _, err := RenderPlots(&Series{Columns: []string{"alpha"}}, PlotOptions{WC: 0.4}); err == nil {
		t.Error("no time_h column: no error")
	}
}

func TestWritePlots(t *testing.T) {
	dir := t.TempDir()
	out, err := WritePlots(dir, synthSeries(30, 0.4), PlotOptions{WC: 0.4})
	if err != nil {
		t.Fatal(err)
	}
	if len(out) != 14 {
		t.Errorf("wrote %d files; want 14", len(out))
	}
	for _, p := range out {
		if fi, err := os.Stat(p); err != nil || fi.Size() == 0 || filepath.Dir(p) != dir {
			t.Errorf("%s: %v", p, err)
		}
	}
}

// The calorimetry plot spans 0–72 h in linear hours even on a longer
// series, and marks the landmarks it is given.
func TestCalorimetryPlot(t *testing.T) {
	s := synthSeries(100, 0.45)
	tcol := s.Column("time_h")
	if tcol[len(tcol)-1] <= CalorimetryMaxH {
		t.Fatalf("synthetic series ends at %g h; the test needs a longer one", tcol[len(tcol)-1])
	}
	f, ok, err := calorimetryFigure(tcol, s.Column("heat_flow_mw_per_g"), &CalorimetryMarks{DormantMinH: 2, MainPeakH: 9.5, SulfateDepletionH: math.NaN()})
	if err != nil || !ok {
		t.Fatalf("calorimetry plot: ok %v, err %v", ok, err)
	}
	svg := string(f.SVG)
	for _, want := range []string{"main peak 9 h 30 min", "dormant minimum 2 h 00 min", ">72<", "age (h)"} {
		if !strings.Contains(svg, want) {
			t.Errorf("calorimetry svg lacks %q", want)
		}
	}
	if strings.Contains(svg, "sulfate depletion") {
		t.Error("sulfate depletion marked without one")
	}
	if got := HoursMinutes(5.5); got != "5 h 30 min" {
		t.Errorf("HoursMinutes(5.5) = %q", got)
	}
	if got := HoursMinutes(23.999); got != "24 h 00 min" {
		t.Errorf("HoursMinutes(23.999) = %q", got)
	}
}
