package fit

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"

	"gonum.org/v1/gonum/optimize"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/voxel"
)

// Measured-curve kinds, by their column name.
const (
	KindHeat  = "heat_j_per_g"
	KindFlow  = "heat_flow_mw_per_g"
	KindAlpha = "alpha"
)

// minMeasuredRows is the fewest rows a curve may have: three multipliers
// need more than three numbers.
const minMeasuredRows = 5

// Measured is a calorimetry curve ready to compare.
type Measured struct {
	File  string
	Kind  string    // kindHeat, kindFlow or kindAlpha, as read
	TimeH []float64 // increasing, > 0
	// Value is cumulative heat J/g (KindHeat; KindFlow integrated from the
	// first row, so its first value is 0) or α.
	Value []float64
	// FromFirst: compare heat released since the first row (flow data,
	// whose heat before the first row is unknown).
	FromFirst bool
}

// ReadMeasured reads a measured curve (CSV with a header row; lines
// starting with # are comments). Errors are *configs.InputError naming the file
// and the line.
func ReadMeasured(path string) (*Measured, error) {
	data, err := configs.ReadInput(path, "measured curve")
	if err != nil {
		return nil, err
	}
	return ParseMeasured(path, bytes.NewReader(data))
}

// ParseMeasured reads a measured curve from r, as ReadMeasured does;
// name is the file name for messages.
func ParseMeasured(name string, r io.Reader) (*Measured, error) {
	bad := func(line int, format string, args ...any) error {
		return &configs.InputError{File: name, Line: line, Msg: fmt.Sprintf(format, args...)}
	}
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.TrimLeadingSpace = true
	cr.FieldsPerRecord = -1
	head, err := cr.Read()
	if err != nil {
		return nil, bad(0, "no header row: want time_h and one of %s, %s, %s", KindHeat, KindFlow, KindAlpha)
	}
	headLine, _ := cr.FieldPos(0)
	ti, vi := -1, -1
	c := &Measured{File: name}
	cols := map[string]int{}
	for i, h := range head {
		cols[strings.TrimSpace(strings.ToLower(strings.TrimPrefix(h, "\ufeff")))] = i
	}
	ti, okT := cols["time_h"]
	for _, k := range []string{KindHeat, KindAlpha, KindFlow} {
		if i, ok := cols[k]; ok {
			vi, c.Kind = i, k
			break
		}
	}
	if !okT || vi < 0 {
		return nil, bad(headLine, "header %s: want time_h and one of %s (cumulative, J/g), %s (mW/g) or %s (degree of hydration)", configs.Snippet(strings.Join(head, ",")), KindHeat, KindFlow, KindAlpha)
	}
	var raw []float64
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			// FieldPos is not defined after an error; the ParseError
			// holds the line.
			line := 0
			var pe *csv.ParseError
			if errors.As(err, &pe) {
				line, err = pe.Line, pe.Err
			}
			return nil, bad(line, "%v", err)
		}
		line, _ := cr.FieldPos(0)
		if len(rec) <= max(ti, vi) {
			return nil, bad(line, "too few columns")
		}
		t, err1 := strconv.ParseFloat(strings.TrimSpace(rec[ti]), 64)
		v, err2 := strconv.ParseFloat(strings.TrimSpace(rec[vi]), 64)
		if err1 != nil || err2 != nil || math.IsNaN(t) || math.IsNaN(v) || math.IsInf(t, 0) || math.IsInf(v, 0) {
			return nil, bad(line, "time_h and %s must be numbers", c.Kind)
		}
		if !(t > 0) || t > configs.MaxUntilH {
			return nil, bad(line, "time_h = %g: must be > 0 and ≤ %g", t, configs.MaxUntilH)
		}
		if n := len(c.TimeH); n > 0 && t <= c.TimeH[n-1] {
			return nil, bad(line, "time_h = %g after %g: times must increase from row to row", t, c.TimeH[n-1])
		}
		switch c.Kind {
		case KindAlpha:
			if v < 0 || v > 1 {
				return nil, bad(line, "alpha = %g: must be between 0 and 1", v)
			}
		case KindHeat:
			if v < 0 || v > 2000 {
				return nil, bad(line, "heat_j_per_g = %g: must be between 0 and 2000 J/g", v)
			}
		case KindFlow:
			if v < -50 || v > 1000 {
				return nil, bad(line, "heat_flow_mw_per_g = %g: must be between -50 and 1000 mW/g", v)
			}
		}
		if n := len(raw); n > 0 && c.Kind != KindFlow && v < raw[n-1] {
			return nil, bad(line, "%s = %g after %g: a cumulative curve must not decrease (give heat flow as %s)", c.Kind, v, raw[n-1], KindFlow)
		}
		c.TimeH = append(c.TimeH, t)
		raw = append(raw, v)
	}
	if len(raw) < minMeasuredRows {
		return nil, bad(0, "%d rows: a fit of three multipliers needs at least %d", len(raw), minMeasuredRows)
	}
	if raw[len(raw)-1] <= 0 && c.Kind != KindFlow {
		return nil, bad(0, "%s is zero throughout: nothing to fit", c.Kind)
	}
	if c.Kind == KindFlow {
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

// MultiplierKeys are the [kinetics] keys of the Multipliers, in order.
var MultiplierKeys = [3]string{"dissolution_scale", "nucleation_scale", "through_product_scale"}

// Limits of the search: every multiplier within a factor of fitRange of
// the config's value.
const fitRange = 30.0

// Model hydrates fixed packed boxes with trial multipliers.
type Model struct {
	cfg   *configs.Config
	grids []*voxel.Grid // packed once per seed; cloned per evaluation
	mixes []*run.Mix    // the resolved mix of each grid (its carried coarse grains)
	seeds []int64
	times []float64
	alpha bool // compare α, not heat
}

// NewModel packs one box per seed (cfg.Seed, cfg.Seed+1, …) for the
// times of the measured curve.
func NewModel(cfg *configs.Config, seeds int, times []float64, alpha bool) (*Model, error) {
	m := &Model{cfg: cfg, times: times, alpha: alpha}
	for k := range seeds {
		c := *cfg
		c.Seed = cfg.Seed + int64(k)
		mix, err := run.Resolve(&c)
		if err != nil {
			return nil, err
		}
		res, err := run.Pack(mix)
		if err != nil {
			return nil, err
		}
		m.grids = append(m.grids, res.Grid)
		m.mixes = append(m.mixes, mix)
		m.seeds = append(m.seeds, c.Seed)
	}
	return m, nil
}

// curve returns the model's heat (J/g) or α at the measured times with
// multipliers x, averaged over the seeds (run side by side).
func (m *Model) Curve(x Multipliers) ([]float64, error) {
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
			set, err := cs.EngineSettings()
			if err != nil {
				errs[k] = err
				return
			}
			e, err := m.mixes[k].NewEngine(m.grids[k].Clone(), set)
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

// The misfit weighs the three features of an isothermal calorimetry curve
// that the three multipliers move apart: the time of the main peak
// (nucleation), its height and width (dissolution) and the slow tail after
// a day or two (through-product). Both curves — the measured one and the
// model's at the measured rows — are interpolated linearly onto the same
// log-spaced grid (fitPerDecade points per decade from fitGridStartH, or
// the first row, to the last row), so early hours and late days count
// alike, and the misfit is
//
//	f = sqrt(e_Q² + w_F·e_F² + w_T·e_T²)
//	e_Q  RMS over the grid of (Q_model − Q_meas) / Q_meas,end (cumulative)
//	e_F  RMS over the grid intervals of ln(F_model + F₀) − ln(F_meas + F₀),
//	     F the mean flow over ±fitFlowWindow grid intervals,
//	     F₀ = fitFlowFloor × the largest measured F: the log weighs the
//	     tail flow (a hundredth of the peak) as much as the peak
//	e_T  RMS of ln t_model − ln t_meas, t the time at which Q reaches
//	     2, 5, 10, 25, 50 and 75 % of Q_meas,end (2 and 5 %: the end of
//	     the dormant period)
const (
	fitGridStartH = 0.5
	fitPerDecade  = 20
	fitFlowFloor  = 0.003
	fitFlowWindow = 2
	fitWeightFlow = 1.0
	fitWeightTime = 1.0
)

// fitFractions are the fractions of the final measured value whose times
// enter e_T.
var fitFractions = [6]float64{0.02, 0.05, 0.10, 0.25, 0.50, 0.75}

// fitTarget is a measured curve prepared for the misfit.
type fitTarget struct {
	c     *Measured
	gridH []float64 // comparison times, h
	q     []float64 // measured Q on the grid
	end   float64   // measured Q at the last row (> 0)
	lflow []float64 // ln(F + F₀) of the measured curve per grid interval
	floor float64   // F₀
	lt    [len(fitFractions)]float64
	// buffers reused by misfit
	bq, bf []float64
}

// misfitParts are the terms of the misfit.
type misfitParts struct {
	Heat, Flow, Time float64
}

// Total is sqrt(e_Q² + w_F·e_F² + w_T·e_T²).
func (p misfitParts) Total() float64 {
	return math.Sqrt(p.Heat*p.Heat + fitWeightFlow*p.Flow*p.Flow + fitWeightTime*p.Time*p.Time)
}

// newFitTarget builds the comparison grid and the measured terms.
func newFitTarget(c *Measured) *fitTarget {
	n := len(c.TimeH)
	t0, t1 := math.Max(fitGridStartH, c.TimeH[0]), c.TimeH[n-1]
	if t0 >= t1 {
		t0 = c.TimeH[0]
	}
	ft := &fitTarget{c: c}
	step := math.Pow(10, 1.0/fitPerDecade)
	for t := t0; t < t1/math.Pow(step, 0.5); t *= step {
		ft.gridH = append(ft.gridH, t)
	}
	ft.gridH = append(ft.gridH, t1)
	ft.end = c.Value[n-1] - ft.offset(c.Value)
	ft.q = ft.onGrid(c.Value, nil)
	f := ft.flow(ft.q, nil)
	for _, v := range f {
		ft.floor = math.Max(ft.floor, v)
	}
	ft.floor *= fitFlowFloor
	if !(ft.floor > 0) {
		ft.floor = 1e-12
	}
	ft.lflow = make([]float64, len(f))
	for i, v := range f {
		ft.lflow[i] = math.Log(math.Max(v, 0) + ft.floor)
	}
	for i, p := range fitFractions {
		ft.lt[i] = ft.lnTimeAt(c.Value, p)
	}
	return ft
}

// offset is the value subtracted from a curve at the measured rows: its
// first value for flow data (heat since the first row), else 0.
func (ft *fitTarget) offset(v []float64) float64 {
	if ft.c.FromFirst {
		return v[0]
	}
	return 0
}

// onGrid interpolates v (at the measured rows, less its offset) linearly
// onto the grid, into dst.
func (ft *fitTarget) onGrid(v, dst []float64) []float64 {
	off := ft.offset(v)
	dst = dst[:0]
	j := 0
	ts := ft.c.TimeH
	for _, t := range ft.gridH {
		for j < len(ts)-2 && ts[j+1] < t {
			j++
		}
		w := (t - ts[j]) / (ts[j+1] - ts[j])
		w = math.Max(0, math.Min(1, w))
		dst = append(dst, v[j]+(v[j+1]-v[j])*w-off)
	}
	return dst
}

// flow is the mean rate of q, per h, over a window of fitFlowWindow grid
// intervals on either side of each grid interval (a tenth of a decade each
// way, fewer at the ends), into dst: the difference of q across the window
// over its length, which evens out the voxel-by-voxel noise of a small box.
func (ft *fitTarget) flow(q, dst []float64) []float64 {
	n := len(q) - 1
	dst = dst[:0]
	for i := range n {
		a, b := max(0, i-fitFlowWindow), min(n, i+1+fitFlowWindow)
		dst = append(dst, (q[b]-q[a])/(ft.gridH[b]-ft.gridH[a]))
	}
	return dst
}

// lnTimeAt is ln of the time at which v (at the measured rows, less its
// offset) first reaches p × the measured final value, by linear
// interpolation between rows; a curve that stays below it is charged as if
// it got there later, in proportion to the shortfall.
func (ft *fitTarget) lnTimeAt(v []float64, p float64) float64 {
	off := ft.offset(v)
	goal := p * ft.end
	ts := ft.c.TimeH
	if v[0]-off >= goal {
		return math.Log(ts[0])
	}
	for i := 1; i < len(v); i++ {
		if a, b := v[i-1]-off, v[i]-off; b >= goal {
			return math.Log(ts[i-1] + (ts[i]-ts[i-1])*(goal-a)/(b-a))
		}
	}
	short := (goal - (v[len(v)-1] - off)) / ft.end
	return math.Log(ts[len(ts)-1]) + 5*short
}

// misfitParts compares the model's values at the measured rows with the
// measured curve.
func (ft *fitTarget) misfitParts(model []float64) misfitParts {
	if len(model) != len(ft.c.TimeH) {
		panic(fmt.Sprintf("gelspace: misfit of %d model values against %d rows", len(model), len(ft.c.TimeH)))
	}
	ft.bq = ft.onGrid(model, ft.bq)
	ft.bf = ft.flow(ft.bq, ft.bf)
	var p misfitParts
	for i, v := range ft.bq {
		d := (v - ft.q[i]) / ft.end
		p.Heat += d * d
	}
	p.Heat = math.Sqrt(p.Heat / float64(len(ft.bq)))
	for i, v := range ft.bf {
		d := math.Log(math.Max(v, 0)+ft.floor) - ft.lflow[i]
		p.Flow += d * d
	}
	p.Flow = math.Sqrt(p.Flow / float64(len(ft.bf)))
	for i, f := range fitFractions {
		d := ft.lnTimeAt(model, f) - ft.lt[i]
		p.Time += d * d
	}
	p.Time = math.Sqrt(p.Time / float64(len(fitFractions)))
	return p
}

// misfit is misfitParts(model).Total().
func (ft *fitTarget) misfit(model []float64) float64 { return ft.misfitParts(model).Total() }

// Result is fit.json.
type Result struct {
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
	// Fixed lists the multipliers held at their start value (--fix).
	Fixed []string `json:"fixed"`
	// MisfitStart and Misfit are the misfits (see fitTarget: heat, log
	// flow and log feature times on a log-spaced grid) at the start and at
	// the fit, MisfitParts the fit's three terms; RMS is the plain RMS of
	// model − measured over the rows in the curve's own unit (J/g or α).
	MisfitStart float64            `json:"misfit_start"`
	Misfit      float64            `json:"misfit"`
	MisfitParts map[string]float64 `json:"misfit_parts"`
	GridPoints  int                `json:"grid_points"`
	// PriorWeight is Settings.Prior of the search.
	PriorWeight float64 `json:"prior_weight"`
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

// Settings steer fitKinetics.
type Settings struct {
	MaxEvals int     // function evaluations at most (each hydrates every seed)
	Simplex  float64 // initial simplex size in log space
	Tol      float64 // stop when the best misfit improves by less than this over a few iterations
	// Fixed holds a multiplier at its start value.
	Fixed [3]bool
	// Staged searches one multiplier at a time first — nucleation (the
	// time of the peak), then dissolution (its height), then
	// through-product (the tail) — and all free ones together from there.
	Staged bool
	// Prior is the weight of the pull towards the start values: the search
	// minimises sqrt(f² + Prior·Σ ln²(x/x_start)), so that a multiplier the
	// curve hardly moves stays near the config's value instead of
	// wandering along a ridge with another one (0: none).
	Prior float64
}

// DefaultPrior is gelspace fit's Settings.Prior: a factor of 2 away from
// the start costs what a misfit of 0.07 does.
const DefaultPrior = 0.01

// objective is the searched function at log-multipliers lx with misfit f.
func (s Settings) objective(f float64, lx []float64) float64 {
	var p float64
	for _, v := range lx {
		p += v * v
	}
	return math.Sqrt(f*f + s.Prior*p)
}

// fitKinetics minimises the misfit over the free multipliers in log space
// with Nelder–Mead, from start. It returns the best multipliers, their
// misfit, the misfit at the start, the evaluation count and gonum's
// termination status of the last search.
func fitKinetics(m *Model, ft *fitTarget, start Multipliers, s Settings) (best Multipliers, fbest, fstart float64, evals int, status string, err error) {
	var evalErr error
	lim := math.Log(fitRange)
	full := func(lx []float64) float64 {
		var x Multipliers
		for i := range x {
			if math.Abs(lx[i]) > lim {
				return 10 + math.Abs(lx[i]) // outside the search box
			}
			x[i] = start[i] * math.Exp(lx[i])
		}
		evals++
		v, err := m.Curve(x)
		if err != nil {
			if evalErr == nil {
				evalErr = err
			}
			return math.Inf(1)
		}
		return s.objective(ft.misfit(v), lx)
	}
	cur := []float64{0, 0, 0}
	fstart = full(cur)
	if evalErr != nil {
		return best, 0, 0, evals, "", evalErr
	}
	fcur := fstart
	// search runs Nelder–Mead over the multipliers idx from cur, restarted
	// from its best point with a fresh simplex of half the size while
	// rounds and evaluations remain (a restart rebuilds a simplex that
	// collapsed on a rough objective); it keeps the best point in cur.
	search := func(idx []int, budget, rounds int) error {
		sub := func(y []float64) float64 {
			lx := slices.Clone(cur)
			for k, i := range idx {
				lx[i] = y[k]
			}
			return full(lx)
		}
		stop := min(s.MaxEvals, evals+budget)
		size := s.Simplex
		for round := 0; round < rounds && evals < stop; round++ {
			y := make([]float64, len(idx))
			for k, i := range idx {
				y[k] = cur[i]
			}
			res, err := optimize.Minimize(optimize.Problem{Func: sub}, y,
				&optimize.Settings{
					InitValues:      &optimize.Location{F: fcur},
					FuncEvaluations: stop - evals,
					Converger:       &optimize.FunctionConverge{Absolute: s.Tol, Relative: 0, Iterations: 12},
				},
				&optimize.NelderMead{SimplexSize: size})
			if evalErr != nil {
				return evalErr
			}
			if res == nil {
				return err
			}
			status = res.Status.String()
			if err != nil && res.Status != optimize.FunctionEvaluationLimit {
				status += ": " + err.Error()
			}
			if res.F <= fcur {
				for k, i := range idx {
					cur[i] = res.X[k]
				}
				fcur = res.F
			}
			size /= 2
		}
		return nil
	}
	var free []int
	for i := range cur {
		if !s.Fixed[i] {
			free = append(free, i)
		}
	}
	if len(free) > 0 {
		if s.Staged && len(free) > 1 {
			for _, i := range []int{1, 0, 2} { // nucleation, dissolution, through-product
				if !s.Fixed[i] {
					if err := search([]int{i}, s.MaxEvals/8, 2); err != nil {
						return best, 0, 0, evals, "", err
					}
				}
			}
		}
		if err := search(free, s.MaxEvals, 3); err != nil {
			return best, 0, 0, evals, "", err
		}
	} else {
		status = "nothing to fit: every multiplier is fixed"
	}
	for i := range best {
		best[i] = start[i] * math.Exp(cur[i])
	}
	v, err := m.Curve(best)
	if err != nil {
		return best, 0, 0, evals, "", err
	}
	return best, ft.misfit(v), fstart, evals, status, nil
}

// sensitivity returns the misfit with each multiplier alone set to 0.8
// and 1.25 times its value in best.
func sensitivity(m *Model, ft *fitTarget, best Multipliers) ([3][2]float64, error) {
	var out [3][2]float64
	for i := range best {
		for j, f := range []float64{0.8, 1.25} {
			x := best
			x[i] *= f
			v, err := m.Curve(x)
			if err != nil {
				return out, err
			}
			out[i][j] = ft.misfit(v)
		}
	}
	return out, nil
}
