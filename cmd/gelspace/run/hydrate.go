package run

import (
	"bytes"
	"encoding/gob"
	"fmt"
	"math"
	"sort"

	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/percolation"
	"gelspace/voxel"
)

// A hydration run: the engine advanced through a schedule of sample ages;
// cheap bookkeeping at every sample (for the heat curve), connectivity at
// every output age, diffusivity where asked, and the set point and the
// capillary-pore depercolation refined between output ages by bisection on
// saved engine states.

// Column names of series.csv and samples.csv, before the vol_<phase>
// columns (a stable interface: scripts read them by name).
var seriesHead = []string{"time_h", "temperature_c", "alpha", "alpha_c3s", "alpha_c2s", "alpha_c3a", "alpha_c4af",
	"alpha_silica_fume", "alpha_fly_ash", "alpha_slag", "alpha_metakaolin",
	"heat_j_per_g", "heat_flow_mw_per_g", "chem_shrinkage_ml_per_g", "water_consumed_g_per_g",
	"nonevaporable_water_g_per_g", "capillary_porosity", "water_filled_porosity",
	"solids_connected_fraction", "solids_span_axes", "pores_connected_fraction", "pores_span_axes", "rel_diffusivity", "rel_diffusivity_capillary",
	"formation_factor", "equivalent_age_h", "gel_space_ratio", "gel_porosity", "total_porosity",
	"ch_g_per_100g", "bound_water_g_per_100g", "aft_g_per_100g", "afm_g_per_100g", "csh_g_per_100g"}

// column indices used below
const (
	colTime = iota
	colTemp
	colAlpha
	colAlphaC3S
	colAlphaC2S
	colAlphaC3A
	colAlphaC4AF
	colAlphaSilicaFume
	colAlphaFlyAsh
	colAlphaSlag
	colAlphaMetakaolin
	colHeat
	colFlow
	colShrink
	colWater
	colNonEvap
	colCapPor
	colWaterPor
	colSolidsFrac
	colSolidsSpan
	colPoresFrac
	colPoresSpan
	colDiff
	colDiffCap
	colFormation
	colEqAge
	colGelSpace
	colGelPor
	colTotPor
	colCH
	colBoundW
	colAFt
	colAFm
	colCSH
	nHead
)

// seriesColumns returns every column name, vol_<phase> included.
func seriesColumns() []string {
	cols := append([]string(nil), seriesHead...)
	for _, p := range kinetics.Phases() {
		cols = append(cols, "vol_"+p.Key)
	}
	return cols
}

// Transition is a refined event: the set point or depercolation.
type Transition struct {
	TimeH    float64 `json:"time_h"`
	Alpha    float64 `json:"alpha"`
	Porosity float64 `json:"capillary_porosity"`
}

// runState is the progress of a run apart from the engine; it is saved in
// checkpoints (JSON) and is all that the outputs are made from.
type runState struct {
	Next     int         // index of the next sample age
	Samples  [][]float64 // one row per sample age reached
	Outputs  []int       // indices of the output rows in Samples
	Frames   [][]byte    // mid xy plane at each output age
	Diff     [][3]float64
	DiffCap  [][3]float64 // of the capillary pores alone (C-S-H insulating)
	DiffAt   []float64
	Set      *Transition
	Deperc   *Transition
	PrevSnap []byte // engine at the last output age, while an event is pending
	PrevH    float64
	WallS    float64
	// InitialSolid is the solid volume fraction of the packed paste (the
	// lattice and the carried grains).
	InitialSolid float64
	// StartTempC is the paste temperature at age 0, °C (the start of the
	// first equivalent-age interval).
	StartTempC float64
	Events     uint64
}

// schedule returns the sample ages: every sampleEvery hours, every output
// age and the end, sorted, and which of them are outputs.
func schedule(untilH, sampleEvery float64, outputs []float64) (ages []float64, isOut []bool) {
	set := map[float64]bool{}
	for k := 1; float64(k)*sampleEvery < untilH-1e-9; k++ {
		set[math.Round(float64(k)*sampleEvery*1e6)/1e6] = false
	}
	for _, t := range outputs {
		if t <= untilH {
			set[t] = true
		}
	}
	set[untilH] = true
	for t := range set {
		ages = append(ages, t)
	}
	sort.Float64s(ages)
	for _, t := range ages {
		isOut = append(isOut, set[t])
	}
	return ages, isOut
}

// hydration runs one paste.
type hydration struct {
	cfg   *configs.Config
	set   voxel.EngineSettings
	e     *voxel.Engine
	ages  []float64
	isOut []bool
	diffT map[float64]bool
	st    runState
	prev  *voxel.Engine // the engine at the last output age, while an event is pending
	// workers bounds the diffusivity solve's and the rendering's
	// goroutines (0: all cores).
	workers int
	lab     percolation.Labeler
	sol     percolation.Solver
	box     percolation.Box
}

func newHydration(cfg *configs.Config, set voxel.EngineSettings, e *voxel.Engine) *hydration {
	h := &hydration{cfg: cfg, set: set, e: e}
	h.ages, h.isOut = schedule(cfg.Curing.UntilH, cfg.Output.SampleEveryH, cfg.Output.TimesH)
	h.diffT = map[float64]bool{}
	if cfg.Output.Diffusivity {
		for _, t := range cfg.Output.DiffusivityTimesH {
			h.diffT[t] = true
		}
		if len(cfg.Output.DiffusivityTimesH) == 0 {
			h.diffT[h.ages[len(h.ages)-1]] = true
		}
	}
	g := e.Grid()
	h.box = percolation.PeriodicBox(g.NX, g.NY, g.NZ)
	return h
}

// CapillaryDiffusivities is the D/D0 table of the capillary pores alone:
// 1 for every pore id, 0 for every solid, C-S-H included — the transport
// that the capillary pore network carries, which stops at its
// depercolation.
func CapillaryDiffusivities() [kinetics.NumIDs]float64 {
	var t [kinetics.NumIDs]float64
	for id := range kinetics.NumIDs {
		if kinetics.IsPore(kinetics.ID(id)) {
			t[id] = 1
		}
	}
	return t
}

// scmAlphaPhases are the reactive phases of the alpha_<kind> columns, in
// column order.
var scmAlphaPhases = [4]kinetics.ID{kinetics.SilicaFume, kinetics.FlyAsh, kinetics.Slag, kinetics.Metakaolin}

// scaleSCMAlpha turns the reacted share of each SCM's reactive part into
// its degree of reaction: the reacted mass over the whole SCM's mass
// (reactive and inert parts), as selective dissolution and image analysis
// report it.
func (h *hydration) scaleSCMAlpha(r []float64) {
	for k, id := range scmAlphaPhases {
		a := math.NaN()
		for _, s := range h.cfg.SCM {
			if kinetics.SCMKindByKey(s.Kind).Phase == id {
				a = s.Amorphous()
			}
		}
		r[colAlphaSilicaFume+k] *= a
	}
}

// row computes the cheap columns of the engine's present state; the
// connectivity and diffusivity columns are NaN.
func row(e *voxel.Engine, prev []float64) []float64 {
	n := e.PasteVoxels() // the paste: the lattice and the carried grains' outlines
	r := make([]float64, nHead, nHead+len(kinetics.Phases()))
	for i := range r {
		r[i] = math.NaN()
	}
	r[colTime] = e.TimeH()
	r[colTemp] = e.TempC()
	r[colAlpha] = e.Alpha()
	r[colAlphaC3S] = e.AlphaOf(kinetics.C3S)
	r[colAlphaC2S] = e.AlphaOf(kinetics.C2S)
	r[colAlphaC3A] = e.AlphaOf(kinetics.C3A)
	r[colAlphaC4AF] = e.AlphaOf(kinetics.C4AF)
	for k, id := range scmAlphaPhases {
		r[colAlphaSilicaFume+k] = e.AlphaOf(id) // of the reactive part; scaled by scaleSCMAlpha
	}
	r[colHeat] = e.HeatJPerG()
	prevT, prevQ := 0.0, 0.0
	if prev != nil {
		prevT, prevQ = prev[colTime], prev[colHeat]
	}
	if dt := r[colTime] - prevT; dt > 0 {
		r[colFlow] = (r[colHeat] - prevQ) / (dt * 3600) * 1000 // J/(g·s) → mW/g
	}
	r[colShrink] = e.ChemShrinkageMLPerG()
	r[colWater] = e.WaterConsumedGPerG()
	r[colNonEvap] = e.NonEvaporableGPerG()
	r[colCapPor] = capPor(e)
	r[colWaterPor] = e.PasteCount(kinetics.Water) / n
	for _, p := range kinetics.Phases() {
		r = append(r, e.PasteCount(p.ID)/n)
	}
	return r
}

// connectivity labels solids and pores of the engine's present lattice.
func (h *hydration) connectivity() (solids, pores percolation.Connectivity) {
	g := h.e.Grid()
	return h.lab.Solids(h.box, g.Phase, g.Particle), h.lab.Pores(h.box, g.Phase)
}

func isSet(c percolation.Connectivity) bool          { return c.SpanAxes == 3 }
func isDepercolated(c percolation.Connectivity) bool { return c.SpanAxes == 0 }

// refine finds by bisection, between the last output age (h.prev) and
// hi, the first age at which test holds, to within 1 % of hi or 0.05 h.
// Replays from a saved state follow the run exactly. Unless keep is set
// (another refinement from the same state follows), h.prev is let go once
// the bisection has moved past it, so that at most three engines are held.
func (h *hydration) refine(hi float64, keep bool, test func(g *voxel.Grid) bool) (*Transition, error) {
	lo := h.st.PrevH
	base := h.prev
	var best *Transition
	var spare *voxel.Engine // a copy given up, whose buffers the next takes
	for hi-lo > math.Max(0.05, 0.01*hi) {
		mid := 0.5 * (lo + hi)
		e := base.CloneInto(spare)
		spare = nil
		if err := e.AdvanceTo(mid); err != nil {
			return nil, err
		}
		if test(e.Grid()) {
			hi = mid
			best = &Transition{TimeH: mid, Alpha: e.Alpha(), Porosity: capPor(e)}
			spare = e
		} else {
			lo = mid
			old := base
			base = e
			if !keep {
				h.prev = nil
			}
			if old != h.prev { // not kept for the next refinement
				spare = old
			}
		}
	}
	return best, nil
}

// capPor is the capillary porosity of the paste: water-filled and empty
// pores of the lattice and the water-filled virtual pores of the carried
// grains' outlines, over the paste volume.
func capPor(e *voxel.Engine) float64 {
	return (e.PasteCount(kinetics.Water) + e.PasteCount(kinetics.Empty)) / e.PasteVoxels()
}

// midPlane copies the xy plane through the middle of the box.
func midPlane(g *voxel.Grid) []byte {
	z := g.NZ / 2
	plane := g.NX * g.NY
	return append([]byte(nil), g.Phase[z*plane:(z+1)*plane]...)
}

// step advances to the next sample age and records it. It reports false
// when the schedule is done.
func (h *hydration) step() (bool, error) {
	k := h.st.Next
	if k >= len(h.ages) {
		return false, nil
	}
	t := h.ages[k]
	if err := h.e.AdvanceTo(t); err != nil {
		return false, err
	}
	var prev []float64
	if n := len(h.st.Samples); n > 0 {
		prev = h.st.Samples[n-1]
	}
	r := row(h.e, prev)
	h.scaleSCMAlpha(r)
	if h.isOut[k] {
		s, p := h.connectivity()
		r[colSolidsFrac], r[colSolidsSpan] = s.Fraction, float64(s.SpanAxes)
		r[colPoresFrac], r[colPoresSpan] = p.Fraction, float64(p.SpanAxes)
		// The events first: at the last age they keep no engine for a
		// later refinement, so that D/D0 runs beside the engine alone.
		if err := h.events(t, s, p); err != nil {
			return false, err
		}
		if h.diffT[t] {
			if err := h.diffusivity(t, r, p); err != nil {
				return false, err
			}
		}
		if h.last() {
			// Nothing is labelled or solved after the last age: the
			// buffers go before the outputs are written.
			h.sol, h.lab = percolation.Solver{}, percolation.Labeler{}
		}
		h.st.Outputs = append(h.st.Outputs, len(h.st.Samples))
		h.st.Frames = append(h.st.Frames, midPlane(h.e.Grid()))
	}
	h.derive(r, prev)
	h.st.Samples = append(h.st.Samples, r)
	h.st.Next++
	ev, _ := h.e.Events()
	h.st.Events = ev
	return true, nil
}

// events detects and refines the set point and depercolation at output age
// t, then keeps the state needed for the next refinement.
func (h *hydration) events(t float64, s, p percolation.Connectivity) error {
	setNow := h.st.Set == nil && isSet(s)
	depNow := h.st.Deperc == nil && isDepercolated(p)
	if setNow || depNow {
		// The engine at t is shelved while the refinement replays from
		// the last output age, so that two engines are held, not three.
		atT := Transition{TimeH: t, Alpha: h.e.Alpha(), Porosity: capPor(h.e)}
		shelf, err := h.shelve()
		if err != nil {
			return err
		}
		// Each event's age: refined by bisection between the last output
		// age and t, or t itself when no replayed age showed the event.
		for _, ev := range []struct {
			now  bool
			keep bool // another refinement from the same state follows
			test func(g *voxel.Grid) bool
			out  **Transition
		}{
			{setNow, depNow, func(g *voxel.Grid) bool { return isSet(h.lab.Solids(h.box, g.Phase, g.Particle)) }, &h.st.Set},
			{depNow, false, func(g *voxel.Grid) bool { return isDepercolated(h.lab.Pores(h.box, g.Phase)) }, &h.st.Deperc},
		} {
			if !ev.now {
				continue
			}
			tr, err := h.refine(t, ev.keep, ev.test)
			if err != nil {
				return err
			}
			if tr == nil {
				at := atT
				tr = &at
			}
			*ev.out = tr
		}
		h.prev = nil
		if err := h.unshelve(shelf); err != nil {
			return err
		}
	}
	h.prev = nil
	if (h.st.Set == nil || h.st.Deperc == nil) && !h.last() {
		h.prev = h.e.Clone()
	}
	h.st.PrevH = t
	return nil
}

// diffusivity solves D/D0 of the lattice at age t into row r (p: the
// pores' connectivity), with the engine shelved meanwhile; the solver's
// buffers are let go before the engine is restored.
func (h *hydration) diffusivity(t float64, r []float64, p percolation.Connectivity) error {
	// The engine is shelved while the lattice is solved, so that the
	// solver's buffers and the engine are not held at once.
	phase := h.e.Grid().Phase
	shelf, err := h.shelve()
	if err != nil {
		return err
	}
	h.sol.Labeler = &h.lab // one set of labelling buffers for the run
	d, err := h.sol.Diffusivity(h.box, phase, percolation.DiffusivityOptions{Workers: h.workers, Tol: h.cfg.Output.DiffusivityTol})
	if err != nil {
		return fmt.Errorf("diffusivity at %g h: %w", t, err)
	}
	r[colDiff] = (d.Rel[0] + d.Rel[1] + d.Rel[2]) / 3
	h.st.Diff = append(h.st.Diff, d.Rel)
	h.st.DiffAt = append(h.st.DiffAt, t)
	// The capillary pores alone: no solve once they no longer
	// span the box (D/D0 is then 0 along every axis).
	dc := [3]float64{math.NaN(), math.NaN(), math.NaN()}
	if h.cfg.Output.CapillaryDiffusivity {
		dc = [3]float64{}
	}
	if h.cfg.Output.CapillaryDiffusivity && p.SpanAxes > 0 {
		tab := CapillaryDiffusivities()
		c, err := h.sol.Diffusivity(h.box, phase, percolation.DiffusivityOptions{Workers: h.workers, Tol: h.cfg.Output.DiffusivityTol, Table: &tab})
		if err != nil {
			return fmt.Errorf("capillary-pore diffusivity at %g h: %w", t, err)
		}
		dc = c.Rel
	}
	r[colDiffCap] = (dc[0] + dc[1] + dc[2]) / 3
	h.st.DiffCap = append(h.st.DiffCap, dc)
	h.sol = percolation.Solver{}
	return h.unshelve(shelf)
}

// shelve puts the engine away in memory (h.e is nil until unshelve).
func (h *hydration) shelve() (*voxel.Shelved, error) {
	sh, err := h.e.Shelve(h.set)
	if err != nil {
		return nil, err
	}
	h.e = nil
	return sh, nil
}

// unshelve restores the engine put away by shelve.
func (h *hydration) unshelve(sh *voxel.Shelved) error {
	e, err := sh.Restore()
	if err != nil {
		return err
	}
	h.e = e
	return nil
}

// last reports whether the sample being taken is the last of the
// schedule.
func (h *hydration) last() bool { return h.st.Next == len(h.ages)-1 }

// start records the state at age 0 for the first refinement.
func (h *hydration) start() error {
	g := h.e.Grid()
	solid := 0
	for _, p := range g.Phase {
		if kinetics.IsSolid(p) {
			solid++
		}
	}
	// of the paste: the carried grains are solid
	h.st.InitialSolid = (float64(solid) + h.e.CarriedVoxels()) / h.e.PasteVoxels()
	h.st.StartTempC = h.e.TempC()
	h.prev = h.e.Clone()
	return nil
}

// marshalState and unmarshalState carry runState through checkpoints (gob,
// which keeps NaN).
// The engine kept for refinement travels as its own checkpoint.
func (h *hydration) marshalState() ([]byte, error) {
	h.st.PrevSnap = nil
	if h.prev != nil {
		var b bytes.Buffer
		if err := h.prev.WriteCheckpoint(&b, &h.set, nil); err != nil {
			return nil, err
		}
		h.st.PrevSnap = b.Bytes()
	}
	var b bytes.Buffer
	err := gob.NewEncoder(&b).Encode(&h.st)
	h.st.PrevSnap = nil
	return b.Bytes(), err
}

func (h *hydration) unmarshalState(b []byte) error {
	var st runState
	if err := gob.NewDecoder(bytes.NewReader(b)).Decode(&st); err != nil {
		return err
	}
	h.st = st
	h.prev = nil
	if len(st.PrevSnap) > 0 {
		e, _, err := voxel.ReadCheckpoint(bytes.NewReader(st.PrevSnap), h.set)
		if err != nil {
			return err
		}
		h.prev = e
	}
	h.st.PrevSnap = nil
	return nil
}
