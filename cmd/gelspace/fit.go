package main

// Calibration of the kinetics to a measured isothermal calorimetry curve.
//
// The measured curve is cumulative heat (J/g of cement), heat flow (mW/g,
// integrated here by the trapezoid rule into heat released since the first
// row) or degree of hydration, against time_h. The model curve is the
// engine's heat (or α) at the measured times, averaged over a few boxes
// packed once each with fixed seeds; every evaluation hydrates clones of
// the same packed grids, so the objective is a deterministic function of
// the three multipliers and is smooth enough for a simplex search. The
// misfit is the root mean square of model − measured over the measured
// rows, divided by the largest measured value (so heat and α fit alike).
// Nelder–Mead (gonum/optimize) searches in log-multiplier space from the
// config's values.

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"
	"sync"

	"gonum.org/v1/gonum/optimize"

	"gelspace/voxel"
)

// Measured-curve kinds, by their column name.
const (
	kindHeat  = "heat_j_per_g"
	kindFlow  = "heat_flow_mw_per_g"
	kindAlpha = "alpha"
)

// minMeasuredRows is the fewest rows a curve may have: three multipliers
// need more than three numbers.
const minMeasuredRows = 5

// measuredCurve is a calorimetry curve ready to compare.
type measuredCurve struct {
	File  string
	Kind  string    // kindHeat, kindFlow or kindAlpha, as read
	TimeH []float64 // increasing, > 0
	// Value is cumulative heat J/g (kindHeat; kindFlow integrated from the
	// first row, so its first value is 0) or α.
	Value []float64
	// FromFirst: compare heat released since the first row (flow data,
	// whose heat before the first row is unknown).
	FromFirst bool
}

// readMeasured reads a measured curve (CSV with a header row; lines
// starting with # are comments). Errors are *InputError naming the file
// and the line.
func readMeasured(path string) (*measuredCurve, error) {
	f, err := os.Open(path)
	if err != nil {
		msg := err.Error()
		if errors.Is(err, os.ErrNotExist) {
			msg = "no such file"
		}
		return nil, &InputError{File: path, Msg: "cannot read measured curve: " + msg}
	}
	defer f.Close()
	return parseMeasured(path, f)
}

func parseMeasured(name string, r io.Reader) (*measuredCurve, error) {
	bad := func(line int, format string, args ...any) error {
		return &InputError{File: name, Line: line, Msg: fmt.Sprintf(format, args...)}
	}
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.TrimLeadingSpace = true
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if err != nil {
		return nil, bad(0, "no header row: want time_h and one of %s, %s, %s", kindHeat, kindFlow, kindAlpha)
	}
	headLine, _ := cr.FieldPos(0)
	ti, vi := -1, -1
	c := &measuredCurve{File: name}
	cols := map[string]int{}
	for i, h := range head {
		cols[strings.TrimSpace(strings.ToLower(h))] = i
	}
	ti, okT := cols["time_h"]
	for _, k := range []string{kindHeat, kindAlpha, kindFlow} {
		if i, ok := cols[k]; ok {
			vi, c.Kind = i, k
			break
		}
	}
	if !okT || vi < 0 {
		return nil, bad(headLine, "header %q: want time_h and one of %s (cumulative, J/g), %s (mW/g) or %s (degree of hydration)", strings.Join(head, ","), kindHeat, kindFlow, kindAlpha)
	}
	var raw []float64
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		line, _ := cr.FieldPos(0)
		if err != nil {
			return nil, bad(line, "%v", err)
		}
		if len(rec) <= max(ti, vi) {
			return nil, bad(line, "too few columns")
		}
		t, err1 := strconv.ParseFloat(strings.TrimSpace(rec[ti]), 64)
		v, err2 := strconv.ParseFloat(strings.TrimSpace(rec[vi]), 64)
		if err1 != nil || err2 != nil || math.IsNaN(t) || math.IsNaN(v) || math.IsInf(t, 0) || math.IsInf(v, 0) {
			return nil, bad(line, "time_h and %s must be numbers", c.Kind)
		}
		if !(t > 0) || t > maxUntilH {
			return nil, bad(line, "time_h = %g: must be > 0 and ≤ %g", t, maxUntilH)
		}
		if n := len(c.TimeH); n > 0 && t <= c.TimeH[n-1] {
			return nil, bad(line, "time_h = %g after %g: times must increase from row to row", t, c.TimeH[n-1])
		}
		switch c.Kind {
		case kindAlpha:
			if v < 0 || v > 1 {
				return nil, bad(line, "alpha = %g: must be between 0 and 1", v)
			}
		case kindHeat:
			if v < 0 || v > 2000 {
				return nil, bad(line, "heat_j_per_g = %g: must be between 0 and 2000 J/g", v)
			}
		case kindFlow:
			if v < -50 || v > 1000 {
				return nil, bad(line, "heat_flow_mw_per_g = %g: must be between -50 and 1000 mW/g", v)
			}
		}
		if n := len(raw); n > 0 && c.Kind != kindFlow && v < raw[n-1] {
			return nil, bad(line, "%s = %g after %g: a cumulative curve must not decrease (give heat flow as %s)", c.Kind, v, raw[n-1], kindFlow)
		}
		c.TimeH = append(c.TimeH, t)
		raw = append(raw, v)
	}
	if len(raw) < minMeasuredRows {
		return nil, bad(0, "%d rows: a fit of three multipliers needs at least %d", len(raw), minMeasuredRows)
	}
	if raw[len(raw)-1] <= 0 && c.Kind != kindFlow {
		return nil, bad(0, "%s is zero throughout: nothing to fit", c.Kind)
	}
	if c.Kind == kindFlow {
		// mW/g × h → J/g: 1 mW/g for 1 h is 3.6 J/g.
		c.FromFirst = true
		c.Value = make([]float64, len(raw))
		for i := 1; i < len(raw); i++ {
			c.Value[i] = c.Value[i-1] + 0.5*(raw[i]+raw[i-1])*(c.TimeH[i]-c.TimeH[i-1])*3.6
		}
		if c.Value[len(raw)-1] <= 0 {
			return nil, bad(0, "the heat flow integrates to %g J/g: nothing to fit", c.Value[len(raw)-1])
		}
	} else {
		c.Value = raw
	}
	return c, nil
}

// Multipliers are the kinetic knobs fit adjusts: kinetics.dissolution_scale,
// kinetics.nucleation_scale and kinetics.through_product_scale.
type Multipliers [3]float64

var multiplierKeys = [3]string{"dissolution_scale", "nucleation_scale", "through_product_scale"}

// Limits of the search: every multiplier within a factor of fitRange of
// the config's value.
const fitRange = 30.0

// fitModel hydrates fixed packed boxes with trial multipliers.
type fitModel struct {
	cfg   *Config
	grids []*voxel.Grid // packed once per seed; cloned per evaluation
	seeds []int64
	times []float64
	alpha bool // compare α, not heat
}

// newFitModel packs one box per seed (cfg.Seed, cfg.Seed+1, …) for the
// times of the measured curve.
func newFitModel(cfg *Config, seeds int, times []float64, alpha bool) (*fitModel, error) {
	m := &fitModel{cfg: cfg, times: times, alpha: alpha}
	for k := range seeds {
		c := *cfg
		c.Seed = cfg.Seed + int64(k)
		mix, err := Resolve(&c)
		if err != nil {
			return nil, err
		}
		res, err := packMix(mix)
		if err != nil {
			return nil, err
		}
		m.grids = append(m.grids, res.Grid)
		m.seeds = append(m.seeds, c.Seed)
	}
	return m, nil
}

// curve returns the model's heat (J/g) or α at the measured times with
// multipliers x, averaged over the seeds (run side by side).
func (m *fitModel) curve(x Multipliers) ([]float64, error) {
	c := *m.cfg
	c.Kinetics.DissolutionScale, c.Kinetics.NucleationScale, c.Kinetics.ThroughProductScale = x[0], x[1], x[2]
	out := make([][]float64, len(m.grids))
	errs := make([]error, len(m.grids))
	var wg sync.WaitGroup
	for k := range m.grids {
		wg.Add(1)
		go func() {
			defer wg.Done()
			cs := c
			cs.Seed = m.seeds[k]
			set, err := engineSettings(&cs)
			if err != nil {
				errs[k] = err
				return
			}
			e, err := voxel.NewEngine(m.grids[k].Clone(), set)
			if err != nil {
				errs[k] = err
				return
			}
			v := make([]float64, len(m.times))
			for i, t := range m.times {
				if err := e.AdvanceTo(t); err != nil {
					errs[k] = err
					return
				}
				if m.alpha {
					v[i] = e.Alpha()
				} else {
					v[i] = e.HeatJPerG()
				}
			}
			out[k] = v
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, err
		}
	}
	avg := make([]float64, len(m.times))
	for _, v := range out {
		for i := range v {
			avg[i] += v[i] / float64(len(out))
		}
	}
	return avg, nil
}

// misfit is the RMS of model − measured over the rows, divided by the
// largest measured value; with fromFirst both curves count from their
// first row.
func misfit(model []float64, c *measuredCurve) float64 {
	off := 0.0
	if c.FromFirst {
		off = model[0]
	}
	var ss, top float64
	for i, v := range c.Value {
		d := model[i] - off - v
		ss += d * d
		top = math.Max(top, math.Abs(v))
	}
	return math.Sqrt(ss/float64(len(c.Value))) / top
}

// FitResult is fit.json.
type FitResult struct {
	Version  string  `json:"version"`
	Caution  string  `json:"caution"`
	Measured string  `json:"measured"`
	Kind     string  `json:"kind"`
	Config   string  `json:"config"`
	Rows     int     `json:"rows"`
	Box      int     `json:"box_voxels"`
	Seeds    []int64 `json:"seeds"`
	// Start and Fitted are the multipliers (dissolution, nucleation,
	// through-product), as kinetics.*_scale.
	Start  map[string]float64 `json:"start"`
	Fitted map[string]float64 `json:"fitted"`
	// MisfitStart and Misfit are the relative RMS misfits (RMS of model −
	// measured over the largest measured value) at the start and at the
	// fit; RMS in the curve's own unit (J/g or α) beside them.
	MisfitStart float64 `json:"misfit_start"`
	Misfit      float64 `json:"misfit"`
	RMS         float64 `json:"rms"`
	RMSUnit     string  `json:"rms_unit"`
	Evaluations int     `json:"evaluations"`
	Status      string  `json:"status"`
	WallS       float64 `json:"wall_s"`
	// TimeH, MeasuredValue and FittedValue are the curves compared.
	// Sensitivity is, per multiplier, the misfit with that multiplier
	// alone set to 0.8 and 1.25 times its fitted value; Determined says
	// whether both are at least twice the fitted misfit. A multiplier
	// that is not determined moves the curve by less than the noise of
	// the boxes: fit with more seeds or a bigger box, or keep its start
	// value.
	Sensitivity   map[string][2]float64 `json:"sensitivity"`
	Determined    map[string]bool       `json:"determined"`
	TimeH         []float64             `json:"time_h"`
	MeasuredValue []float64             `json:"measured_value"`
	FittedValue   []float64             `json:"fitted_value"`
}

// fitSettings steer fitKinetics.
type fitSettings struct {
	MaxEvals int     // function evaluations at most (each hydrates every seed)
	Simplex  float64 // initial simplex size in log space
	Tol      float64 // stop when the best misfit improves by less than this over a few iterations
}

// fitKinetics minimises the misfit over the three multipliers in log
// space with Nelder–Mead, from start. It returns the best multipliers,
// their misfit, the misfit at the start, the evaluation count and
// gonum's termination status.
func fitKinetics(m *fitModel, c *measuredCurve, start Multipliers, s fitSettings) (best Multipliers, fbest, fstart float64, evals int, status string, err error) {
	var evalErr error
	lim := math.Log(fitRange)
	f := func(lx []float64) float64 {
		var x Multipliers
		for i := range x {
			if math.Abs(lx[i]) > lim {
				return 10 + math.Abs(lx[i]) // outside the search box
			}
			x[i] = start[i] * math.Exp(lx[i])
		}
		evals++
		v, err := m.curve(x)
		if err != nil {
			if evalErr == nil {
				evalErr = err
			}
			return math.Inf(1)
		}
		return misfit(v, c)
	}
	fstart = f([]float64{0, 0, 0})
	if evalErr != nil {
		return best, 0, 0, evals, "", evalErr
	}
	// Nelder–Mead, restarted from its best point with a fresh simplex of
	// half the size while evaluations remain: a restart rebuilds a
	// simplex that collapsed on a rough objective.
	x, fx := []float64{0, 0, 0}, fstart
	size := s.Simplex
	for round := 0; round < 3 && evals < s.MaxEvals; round++ {
		res, err := optimize.Minimize(optimize.Problem{Func: f}, x,
			&optimize.Settings{
				InitValues:      &optimize.Location{F: fx},
				FuncEvaluations: s.MaxEvals - evals,
				Converger:       &optimize.FunctionConverge{Absolute: s.Tol, Relative: 0, Iterations: 12},
			},
			&optimize.NelderMead{SimplexSize: size})
		if evalErr != nil {
			return best, 0, 0, evals, "", evalErr
		}
		if res == nil {
			return best, 0, 0, evals, "", err
		}
		status = res.Status.String()
		if err != nil && res.Status != optimize.FunctionEvaluationLimit {
			status += ": " + err.Error()
		}
		if res.F <= fx {
			x, fx = res.X, res.F
		}
		size /= 2
	}
	for i := range best {
		best[i] = start[i] * math.Exp(x[i])
	}
	return best, fx, fstart, evals, status, nil
}

// sensitivity returns the misfit with each multiplier alone set to 0.8
// and 1.25 times its value in best.
func sensitivity(m *fitModel, c *measuredCurve, best Multipliers) ([3][2]float64, error) {
	var out [3][2]float64
	for i := range best {
		for j, f := range []float64{0.8, 1.25} {
			x := best
			x[i] *= f
			v, err := m.curve(x)
			if err != nil {
				return out, err
			}
			out[i][j] = misfit(v, c)
		}
	}
	return out, nil
}
