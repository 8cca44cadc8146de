package fit

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/render"
)

// Calibrate packs the boxes, runs the search from the config's multipliers
// and returns fit.json's content.
func Calibrate(cfg *configs.Config, curve *Measured, seeds int, s Settings) (*Result, error) {
	m, err := NewModel(cfg, seeds, curve.TimeH, curve.Kind == KindAlpha)
	if err != nil {
		return nil, err
	}
	ft := newFitTarget(curve)
	k := cfg.Kinetics
	x0 := Multipliers{k.DissolutionScale, k.NucleationScale, k.ThroughProductScale}
	best, f, f0, evals, status, err := fitKinetics(m, ft, x0, s)
	if err != nil {
		return nil, err
	}
	model, err := m.Curve(best)
	if err != nil {
		return nil, err
	}
	r := &Result{Version: run.Version, Caution: render.Caution, Measured: curve.File, Kind: curve.Kind, Config: cfg.Source,
		Rows: len(curve.TimeH), Box: cfg.Box.Voxels, Seeds: m.seeds, Start: map[string]float64{}, Fitted: map[string]float64{},
		MisfitStart: f0, Misfit: f, Evaluations: evals, Status: status, TimeH: curve.TimeH, MeasuredValue: curve.Value}
	parts := ft.misfitParts(model)
	r.MisfitParts = map[string]float64{"heat": parts.Heat, "log_flow": parts.Flow, "log_time": parts.Time}
	r.GridPoints, r.PriorWeight = len(ft.gridH), s.Prior
	r.Fixed = []string{}
	sens, err := sensitivity(m, ft, best)
	if err != nil {
		return nil, err
	}
	r.Sensitivity, r.Determined = map[string][2]float64{}, map[string]bool{}
	for i, key := range MultiplierKeys {
		r.Start[key], r.Fitted[key] = x0[i], best[i]
		if s.Fixed[i] {
			r.Fixed = append(r.Fixed, key)
		}
		r.Sensitivity[key] = sens[i]
		r.Determined[key] = sens[i][0] >= 2*f && sens[i][1] >= 2*f
	}
	off := 0.0
	if curve.FromFirst {
		off = model[0]
	}
	var ss float64
	for i := range model {
		r.FittedValue = append(r.FittedValue, model[i]-off)
		d := model[i] - off - curve.Value[i]
		ss += d * d
	}
	r.RMS = math.Sqrt(ss / float64(len(model)))
	r.RMSUnit = "J/g"
	if curve.Kind == KindAlpha {
		r.RMSUnit = "alpha"
	}
	return r, nil
}

// WriteOutputs writes fit.toml, fit.json and fit.png into dir.
func WriteOutputs(dir string, r *Result) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var t bytes.Buffer
	fmt.Fprintf(&t, "# Kinetic multipliers fitted by gelspace %s to %s (%s, %d rows)\n", r.Version, r.Measured, r.Kind, r.Rows)
	fmt.Fprintf(&t, "# with %s on %d³ voxels, seeds %v: relative RMS misfit %.4g (%.4g %s), %d evaluations.\n", r.Config, r.Box, r.Seeds, r.Misfit, r.RMS, r.RMSUnit, r.Evaluations)
	t.WriteString("# Paste into the run config (replacing any [kinetics] scales there).\n[kinetics]\n")
	for _, k := range MultiplierKeys {
		note := ""
		if slices.Contains(r.Fixed, k) {
			note = "  # held (--fix)"
		} else if !r.Determined[k] {
			note = "  # poorly determined by this curve (fit.json: sensitivity)"
		}
		fmt.Fprintf(&t, "%s = %.4g%s\n", k, r.Fitted[k], note)
	}
	if err := render.WriteFileAtomic(filepath.Join(dir, "fit.toml"), func(w io.Writer) error { _, err := w.Write(t.Bytes()); return err }); err != nil {
		return err
	}
	if err := render.WriteFileAtomic(filepath.Join(dir, "fit.json"), func(w io.Writer) error { return run.WriteJSON(w, r) }); err != nil {
		return err
	}
	p := plot.New()
	p.Title.Text = "measured and fitted"
	p.X.Label.Text = "time, h"
	switch r.Kind {
	case KindAlpha:
		p.Y.Label.Text = "degree of hydration"
	case KindFlow:
		p.Y.Label.Text = fmt.Sprintf("heat since %g h, J/g", r.TimeH[0])
	default:
		p.Y.Label.Text = "heat, J/g"
	}
	p.Add(plotter.NewGrid())
	meas, fitted := make(plotter.XYs, len(r.TimeH)), make(plotter.XYs, len(r.TimeH))
	for i, t := range r.TimeH {
		meas[i] = plotter.XY{X: t, Y: r.MeasuredValue[i]}
		fitted[i] = plotter.XY{X: t, Y: r.FittedValue[i]}
	}
	sc, err := plotter.NewScatter(meas)
	if err != nil {
		return err
	}
	sc.Shape = draw.CircleGlyph{}
	sc.Radius = vg.Points(2)
	sc.Color = color.Black
	ln, err := plotter.NewLine(fitted)
	if err != nil {
		return err
	}
	ln.Color = color.RGBA{R: 200, G: 40, B: 40, A: 255}
	ln.Width = vg.Points(1.5)
	p.Add(sc, ln)
	p.Legend.Add("measured", sc)
	p.Legend.Add(fmt.Sprintf("model (misfit %.3g)", r.Misfit), ln)
	p.Legend.Top, p.Legend.Left = true, true
	wt, err := p.WriterTo(16*vg.Centimeter, 11*vg.Centimeter, "png")
	if err != nil {
		return err
	}
	return render.WriteFileAtomic(filepath.Join(dir, "fit.png"), func(w io.Writer) error { _, err := wt.WriteTo(w); return err })
}
