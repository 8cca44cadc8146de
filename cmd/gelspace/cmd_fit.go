package main

import (
	"bytes"
	"fmt"
	"image/color"
	"io"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"

	"gelspace/render"
)

type fitOpts struct {
	configFlags
	config   string
	out      string
	seeds    int
	maxEvals int
	fix      []string
}

// Defaults of gelspace fit: a 40³ box, three seeds, 120 evaluations.
const (
	fitDefaultVoxels = 40
	fitDefaultSeeds  = 3
	fitDefaultEvals  = 120
)

func fitCommand() *command {
	return &command{
		name:    "fit",
		args:    "MEASURED.csv [--config CONFIG] [--out DIR] [flags]",
		summary: "calibrate the kinetic multipliers to a measured isothermal calorimetry curve",
		examples: `  gelspace fit testdata/fit/rw-g-heat-20c.csv --out fit-rw-g      # embedded default mix
  gelspace fit lab.csv --config my.toml --seeds 4 --max-evals 200 --out fit
  gelspace fit lab.csv --fix through_product_scale=1 --out fit      # hold a known multiplier
MEASURED.csv: a header row with time_h and one of heat_j_per_g (cumulative, J/g of
cement), heat_flow_mw_per_g (mW/g) or alpha (degree of hydration); at least 5 rows,
times increasing, cumulative curves never decreasing. The config gives the mix and
the temperature of the test; the box defaults to 40³ voxels (--size) for speed.
Writes DIR/fit.toml (a [kinetics] fragment to paste into the config), fit.json and fit.png.
`,
		flags: func(fs *pflag.FlagSet) any {
			o := &fitOpts{}
			fs.StringVarP(&o.config, "config", "c", "", "run config with the mix and curing temperature (default: the embedded default)")
			fs.StringVarP(&o.out, "out", "o", "gelspace-fit", "output folder")
			fs.IntVar(&o.seeds, "seeds", fitDefaultSeeds, "boxes (seeds) averaged per evaluation, 1–16")
			fs.IntVar(&o.maxEvals, "max-evals", fitDefaultEvals, "model evaluations at most, 10–10000")
			fs.StringArrayVar(&o.fix, "fix", nil, "hold a multiplier at a known value: KEY=VALUE, KEY one of dissolution_scale, nucleation_scale, through_product_scale (repeatable)")
			addConfigFlags(fs, &o.configFlags)
			return o
		},
		run: func(opts any, fs *pflag.FlagSet, stdout, stderr io.Writer) error {
			return runFit(opts.(*fitOpts), fs, stdout)
		},
	}
}

func runFit(o *fitOpts, fs *pflag.FlagSet, stdout io.Writer) error {
	if fs.NArg() != 1 {
		return &usageError{fmt.Sprintf("fit: takes one MEASURED.csv, got %d arguments; see gelspace fit --help", fs.NArg())}
	}
	if o.seeds < 1 || o.seeds > 16 {
		return &usageError{fmt.Sprintf("fit: --seeds %d: must be between 1 and 16", o.seeds)}
	}
	if o.maxEvals < 10 || o.maxEvals > 10000 {
		return &usageError{fmt.Sprintf("fit: --max-evals %d: must be between 10 and 10000", o.maxEvals)}
	}
	fixed, fixSets, err := parseFixes(o.fix)
	if err != nil {
		return err
	}
	curve, err := readMeasured(fs.Arg(0))
	if err != nil {
		return err
	}
	sets := []string{fmt.Sprintf("box.voxels=%d", fitDefaultVoxels)}
	sets = append(sets, o.sets...)
	if fs.Changed("seed") {
		if o.seed < 0 {
			return &usageError{fmt.Sprintf("fit: --seed %d: must be ≥ 0", o.seed)}
		}
		sets = append(sets, fmt.Sprintf("seed=%d", o.seed))
	}
	if fs.Changed("size") {
		sets = append(sets, fmt.Sprintf("box.voxels=%d", o.size))
	}
	// The run ends at the last measured time; output ages beyond it are
	// dropped (fit records none).
	last := curve.TimeH[len(curve.TimeH)-1]
	sets = append(sets, fmt.Sprintf("curing.until_h=%g", last), "output.times_h=[]")
	sets = append(sets, fixSets...)
	cfg, err := LoadConfig(o.config, sets)
	if err != nil {
		return err
	}
	start := time.Now()
	res, err := fitCurve(cfg, curve, o.seeds, fitSettings{MaxEvals: o.maxEvals, Simplex: 0.4, Tol: 1e-4, Fixed: fixed, Staged: true, Prior: fitPrior})
	if err != nil {
		return err
	}
	res.WallS = time.Since(start).Seconds()
	if err := writeFitOutputs(o.out, res); err != nil {
		return err
	}
	if !o.quiet {
		fmt.Fprintf(stdout, "fitted %s (%d rows) in %d evaluations, %.0f s: dissolution_scale %.3g, nucleation_scale %.3g, through_product_scale %.3g; misfit %.3g (from %.3g) → %s\n",
			curve.File, len(curve.TimeH), res.Evaluations, res.WallS, res.Fitted[multiplierKeys[0]], res.Fitted[multiplierKeys[1]], res.Fitted[multiplierKeys[2]],
			res.Misfit, res.MisfitStart, filepath.Join(o.out, "fit.toml"))
		var weak []string
		for _, k := range multiplierKeys {
			if !res.Determined[k] && !slices.Contains(res.Fixed, k) {
				weak = append(weak, k)
			}
		}
		if len(weak) > 0 {
			fmt.Fprintf(stdout, "note: the misfit hardly moves when %s is scaled by 0.8 or 1.25 (see fit.json sensitivity): poorly determined by this curve; try more --seeds or a bigger --size\n", strings.Join(weak, ", "))
		}
	}
	return nil
}

// parseFixes reads the --fix values: which multipliers are held, and the
// config settings (kinetics.KEY=VALUE) that hold them.
func parseFixes(fix []string) (fixed [3]bool, sets []string, err error) {
	for _, f := range fix {
		key, val, ok := strings.Cut(f, "=")
		key = strings.TrimPrefix(strings.TrimSpace(key), "kinetics.")
		i := slices.Index(multiplierKeys[:], key)
		if !ok || i < 0 {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %q: want KEY=VALUE with KEY one of %s", f, strings.Join(multiplierKeys[:], ", "))}
		}
		v, err := strconv.ParseFloat(strings.TrimSpace(val), 64)
		if err != nil || !(v > 0 && v <= 1000) {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %s=%s: the value must be a number > 0 and ≤ 1000", key, val)}
		}
		if fixed[i] {
			return fixed, nil, &usageError{fmt.Sprintf("fit: --fix %s given twice", key)}
		}
		fixed[i] = true
		sets = append(sets, fmt.Sprintf("kinetics.%s=%g", key, v))
	}
	return fixed, sets, nil
}

// fitCurve packs the boxes, runs the search from the config's multipliers
// and returns fit.json's content.
func fitCurve(cfg *Config, curve *measuredCurve, seeds int, s fitSettings) (*FitResult, error) {
	m, err := newFitModel(cfg, seeds, curve.TimeH, curve.Kind == kindAlpha)
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
	model, err := m.curve(best)
	if err != nil {
		return nil, err
	}
	r := &FitResult{Version: version, Caution: render.Caution, Measured: curve.File, Kind: curve.Kind, Config: cfg.Source,
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
	for i, key := range multiplierKeys {
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
	if curve.Kind == kindAlpha {
		r.RMSUnit = "alpha"
	}
	return r, nil
}

// writeFitOutputs writes fit.toml, fit.json and fit.png into dir.
func writeFitOutputs(dir string, r *FitResult) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var t bytes.Buffer
	fmt.Fprintf(&t, "# Kinetic multipliers fitted by gelspace %s to %s (%s, %d rows)\n", r.Version, r.Measured, r.Kind, r.Rows)
	fmt.Fprintf(&t, "# with %s on %d³ voxels, seeds %v: relative RMS misfit %.4g (%.4g %s), %d evaluations.\n", r.Config, r.Box, r.Seeds, r.Misfit, r.RMS, r.RMSUnit, r.Evaluations)
	t.WriteString("# Paste into the run config (replacing any [kinetics] scales there).\n[kinetics]\n")
	for _, k := range multiplierKeys {
		note := ""
		if slices.Contains(r.Fixed, k) {
			note = "  # held (--fix)"
		} else if !r.Determined[k] {
			note = "  # poorly determined by this curve (fit.json: sensitivity)"
		}
		fmt.Fprintf(&t, "%s = %.4g%s\n", k, r.Fitted[k], note)
	}
	if err := WriteFileAtomic(filepath.Join(dir, "fit.toml"), func(w io.Writer) error { _, err := w.Write(t.Bytes()); return err }); err != nil {
		return err
	}
	if err := WriteFileAtomic(filepath.Join(dir, "fit.json"), func(w io.Writer) error { return writeJSON(w, r) }); err != nil {
		return err
	}
	p := plot.New()
	p.Title.Text = "measured and fitted"
	p.X.Label.Text = "time, h"
	switch r.Kind {
	case kindAlpha:
		p.Y.Label.Text = "degree of hydration"
	case kindFlow:
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
	return WriteFileAtomic(filepath.Join(dir, "fit.png"), func(w io.Writer) error { _, err := wt.WriteTo(w); return err })
}
