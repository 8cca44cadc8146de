package voxel

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"

	"gelspace/kinetics"
)

// The hydration engine; the model, its rates and its assumptions are in
// the package doc (doc.go).

// Engine is the state of one hydrating paste.
type Engine struct {
	g       *Grid
	p       kinetics.Params
	thermal kinetics.Thermal
	sealed  bool

	voxCM3  float64 // voxel volume, cm³
	cementG float64 // mass of the whole cement (clinker, sulfate, fillers) in the box at the start, g

	// Dissolving phases, by index d.
	dph     []kinetics.ID
	dOf     [kinetics.NumIDs]int8 // phase → d, or −1
	velPerS []float64             // v/h, 1/s per exposed face at 20 °C
	beta    []float64
	sulfFac []float64
	ea      []float64
	rxOfD   []int                  // reaction index for phases with one reaction, −1 otherwise
	seq     [kinetics.NumIDs][]int // reaction indices of kinetics.Sequence, by primary phase
	cls     []uint16               // class of each voxel, d*classesPerPhase + exposure, or noClass
	// solidNb holds, per voxel, a bit for each face direction k (the order
	// of Grid.Neighbours) whose neighbour is not pore water: 0 means six
	// water neighbours. setPhase keeps it current; the walk reads it in
	// place of the neighbours' phases.
	solidNb []uint8
	// hydNb holds the same bits for the face neighbours that are hydrates
	// (kinetics.IsHydrate), for exposure.
	hydNb []uint8
	// dim and stride are the lattice's edge lengths and index strides by
	// axis, for the walk.
	dim, stride [3]int
	slot        []int32
	sets        [][]int32 // d*classesPerPhase + exposure class → members
	sumW        []int     // per d: Σ faces touching water
	sumH        []int     // per d: Σ faces touching hydrate (product)
	// bulk is S_v·h for a sub-voxel powder (kinetics.Dissolution
	// SurfacePerUM): the faces' worth of surface in each of its voxels; 0
	// for the face law. nAccW and nAccH count, per d, the exposed voxels
	// with a face on water and those touching only product.
	bulk         []float64
	nAccW, nAccH []int
	// chNeed is, per d, the CH (mol) one voxel of an SCM takes from the
	// solution (0 for slag, which needs CH only as activator), or −1 for
	// the other phases; anySCM says whether any d has one.
	chNeed   []float64
	anySCM   bool
	sulfMol  []float64 // per d: mol per µm³ for sulfate carriers, 0 otherwise
	rules    [kinetics.NumIDs]*stickRule
	anySolid stickRule     // rule for trapped units
	products []kinetics.ID // products that travel as units, in event order

	s   state
	pcg *rand.PCG
	r   *rand.Rand
	// scratch
	arrT    float64
	arrD    []float64
	arrNuc  float64
	delta0  float64 // δ0 of the through-product law at arrT, µm
	rates   []float64
	rxIndex map[string]int
	// walkSteps and spawnSteps are the walk lengths in steps of this voxel
	// size: the parameters are stated for 1 µm voxels and scaled by
	// (1 µm / h)², so that a walk explores the same distance in µm.
	walkSteps, spawnSteps int
	// partInit is the number of anhydrous voxels of each grain at the start,
	// by particle id.
	partInit []int32
	// divX and divY divide by the lattice's edges NX and NY (coords).
	divX, divY divider
	// guard, when set, is called every GuardEvery events (see SetGuard).
	guard func(events uint64, timeS float64) error
	// cc caches sums over the carried coarse grains (coarse.go); kappa is
	// the digitised sphere's face ratio they use.
	cc    coarseCache
	kappa float64
}

// GuardEvery is how often, in events, AdvanceTo calls the guard.
const GuardEvery = 1 << 16

// SetGuard makes AdvanceTo call f with the event count and the clock (s)
// every GuardEvery events and stop with f's error, so that a caller can
// end a run whose clock no longer advances. Clones share it; checkpoints
// do not keep it.
func (e *Engine) SetGuard(f func(events uint64, timeS float64) error) { e.guard = f }

// state is everything that changes during a run apart from the lattice and
// the class sets; it is saved whole in checkpoints.
type state struct {
	TimeS      float64
	Pending    bool
	NextS      float64
	HeatJ      float64
	WaterMol   float64 // water consumed by reactions
	ShrinkVox  float64 // chemical shrinkage so far, voxels
	ShrinkAcc  float64 // sealed: shrinkage not yet emptied, voxels
	PoolSO4Mol float64 // dissolved sulfate, as mol of gypsum
	// CoPool holds, per phase, co-reactant drawn from exposed voxels and
	// not yet used (ettringite, calcite, CH), mol.
	CoPool    [kinetics.NumIDs]float64
	Free      [kinetics.NumIDs][]int32 // positions of dissolved units
	Fails     [kinetics.NumIDs][]uint8 // failed attempts of each unit
	Acc       [][]float64              // per reaction, per product term: fractional voxels
	Spawned   [][]int                  // per reaction, per product term: units made
	RxVoxels  []int                    // per reaction: primary voxels reacted
	Count     [kinetics.NumIDs]int
	Initial   [kinetics.NumIDs]int
	Reacted   [kinetics.NumIDs]int // voxels of each phase consumed
	PartLeft  []int32              // anhydrous voxels left in each grain
	Events    uint64
	Steps     uint64
	EmptyList []int32
	EmptyPos  int
	WaterOut  bool // sealed: shrinkage could not be emptied (no water left)
	// CHSeen records that portlandite has formed; CHOut that, after it
	// had, an SCM with exposed surface could not react for want of CH,
	// first at CHOutS (s).
	CHSeen bool
	CHOut  bool
	CHOutS float64
	RNG    []byte
	Coarse coarseState // carried coarse grains (coarse.go)
}

// maxFails is the number of failed precipitation attempts after which a
// dissolved unit is taken to be trapped in a pore that holds no site for it
// (once its product is abundant elsewhere): the pore solution there is
// supersaturated, and the unit precipitates on the first solid surface its
// next walk meets.
const maxFails = 12

type stickRule struct {
	on, seeded [kinetics.NumIDs]float32
	seed       [kinetics.NumIDs]bool
	hasSeeds   bool
	// inWaterVal is the rule's value for six pore-water neighbours (the
	// walk's stickValue for a voxel with solidNb 0); finish sets it.
	inWaterVal float32
}

// finish sets the rule's derived fields from its tables.
func (r *stickRule) finish() {
	var best float32
	if v := r.on[kinetics.Water]; v > best {
		best = v
	}
	if r.seed[kinetics.Water] {
		if v := r.seeded[kinetics.Water]; v > best {
			best = v
		}
	}
	r.inWaterVal = best
}

const (
	classesPerPhase = 28
	noClass         = 0xffff
)

// triIdx maps (faces to water, faces to C-S-H) with sum ≤ 6 to 0–27;
// (0, 0), a voxel with no exposure, has index 0 and is never stored.
var triIdx [7][7]uint8
var triW, triH [classesPerPhase]uint8

func init() {
	k := uint8(0)
	for w := 0; w <= 6; w++ {
		for h := 0; h+w <= 6; h++ {
			triIdx[w][h] = k
			triW[k], triH[k] = uint8(w), uint8(h)
			k++
		}
	}
}

// EngineSettings configure NewEngine.
type EngineSettings struct {
	Params  kinetics.Params
	Thermal kinetics.Thermal
	Sealed  bool   // sealed curing; saturated when false
	Seed    uint64 // random seed
}

// NewEngine prepares the grid for hydration. The engine owns g from now on;
// its particle map (g.Particle) is read-only from then on, shared by the
// engine's clones.
func NewEngine(g *Grid, set EngineSettings) (*Engine, error) {
	if err := set.Params.Validate(); err != nil {
		return nil, err
	}
	if err := set.Thermal.Validate(); err != nil {
		return nil, err
	}
	e := &Engine{g: g, p: set.Params, thermal: set.Thermal, sealed: set.Sealed}
	e.dim = [3]int{g.NX, g.NY, g.NZ}
	e.stride = [3]int{1, g.NX, g.NX * g.NY}
	e.voxCM3 = math.Pow(g.VoxelUM*1e-4, 3)
	scale := 1 / (g.VoxelUM * g.VoxelUM)
	e.walkSteps = max(1, int(math.Round(float64(e.p.WalkSteps)*scale)))
	e.spawnSteps = max(1, int(math.Round(float64(e.p.SpawnSteps)*scale)))
	e.rxIndex = map[string]int{}
	for i, r := range kinetics.Reactions() {
		e.rxIndex[r.Key] = i
	}
	for i := range e.dOf {
		e.dOf[i] = -1
	}
	for id := range e.seq {
		for _, key := range kinetics.Sequence(kinetics.ID(id)) {
			e.seq[id] = append(e.seq[id], e.rxIndex[key])
		}
	}
	for _, d := range e.p.Dissolve {
		e.dOf[d.Phase] = int8(len(e.dph))
		e.dph = append(e.dph, d.Phase)
		e.velPerS = append(e.velPerS, d.VelocityUMPerH/g.VoxelUM/3600)
		e.beta = append(e.beta, d.ThroughProduct)
		e.sulfFac = append(e.sulfFac, d.SulfateFactor)
		e.ea = append(e.ea, d.EaKJPerMol)
		sm := 0.0
		if ph := kinetics.Lookup(d.Phase); ph.Role == kinetics.RoleSulfate {
			sm = 1e-12 / ph.MolarVolumeCM3()
		}
		e.sulfMol = append(e.sulfMol, sm)
		rx := -1
		need := -1.0
		if key := kinetics.PrimaryReaction(d.Phase); key != "" {
			rx = e.rxIndex[key]
			if ph := kinetics.Lookup(d.Phase); ph.Role == kinetics.RoleSCM {
				r := &kinetics.Reactions()[rx]
				need = 0
				for _, c := range r.Co {
					if c.Phase == kinetics.CH {
						need += c.Mol * e.voxCM3 / ph.MolarVolumeCM3() / r.PrimaryMol
					}
				}
				e.anySCM = true
			}
		}
		e.rxOfD = append(e.rxOfD, rx)
		e.chNeed = append(e.chNeed, need)
		e.bulk = append(e.bulk, d.SurfacePerUM*g.VoxelUM)
	}
	if len(e.dph)*classesPerPhase >= noClass {
		return nil, fmt.Errorf("voxel: %d dissolving phases in the kinetics table: at most %d", len(e.dph), (noClass-1)/classesPerPhase)
	}
	for _, id := range []kinetics.ID{kinetics.Gypsum} {
		if e.dOf[id] < 0 {
			return nil, fmt.Errorf("voxel: the kinetics table must give a dissolution law for %s", kinetics.Lookup(id).Key)
		}
	}
	for i := range e.p.Growth {
		gr := &e.p.Growth[i]
		r := &stickRule{}
		for id, v := range gr.On {
			r.on[id] = float32(v)
		}
		for id, v := range gr.Seeded {
			r.seeded[id] = float32(v)
		}
		for _, id := range gr.Seeds {
			r.seed[id] = true
			r.hasSeeds = true
		}
		r.finish()
		e.rules[gr.Product] = r
		e.products = append(e.products, gr.Product)
	}
	for i := range kinetics.Phases() {
		if ph := &kinetics.Phases()[i]; kinetics.IsSolid(ph.ID) {
			e.anySolid.on[ph.ID] = 1
		}
	}
	e.anySolid.finish()
	rxs := kinetics.Reactions()
	e.s.Acc = make([][]float64, len(rxs))
	e.s.Spawned = make([][]int, len(rxs))
	e.s.RxVoxels = make([]int, len(rxs))
	for i, r := range rxs {
		e.s.Acc[i] = make([]float64, len(r.Products))
		e.s.Spawned[i] = make([]int, len(r.Products))
		for _, t := range r.Products {
			if t.Phase != kinetics.Gypsum && e.rules[t.Phase] == nil {
				return nil, fmt.Errorf("voxel: no growth rule for %s, a product of %s", kinetics.Lookup(t.Phase).Key, r.Key)
			}
		}
	}
	for _, id := range g.Phase {
		if kinetics.Lookup(id) == nil {
			return nil, fmt.Errorf("voxel: phase id %d in the grid is not in the phase table", id)
		}
	}
	e.s.Count = g.Count()
	e.s.Initial = e.s.Count
	e.setCementMass()
	if e.cementG == 0 {
		return nil, errors.New("voxel: the box holds no cement to hydrate")
	}
	e.pcg = rand.NewPCG(set.Seed, set.Seed^0x9e3779b97f4a7c15)
	e.r = rand.New(e.pcg)
	var maxP int32
	for _, p := range g.Particle {
		maxP = max(maxP, p)
	}
	e.partInit = make([]int32, maxP+1)
	for i, p := range g.Particle {
		if p > 0 && kinetics.IsAnhydrous(g.Phase[i]) {
			e.partInit[p]++
		}
	}
	e.s.PartLeft = append([]int32(nil), e.partInit...)
	e.divX, e.divY = newDivider(g.NX), newDivider(g.NY)
	e.buildSolidNb()
	e.buildClasses()
	e.arrT = math.NaN()
	e.arrD = make([]float64, len(e.dph))
	// the lattice's events, then one carried event per dissolving phase
	e.rates = make([]float64, 2*len(e.dph)+2+len(e.products))
	e.kappa = sphereFaceRatio()
	return e, nil
}

// divider divides integers below 2³² by a fixed positive d with a
// multiplication: with c = ⌈2⁶⁴/d⌉, n/d is the high word of c·n for every
// n < 2³² (Lemire, Kaser and Kurz, "Faster remainder by direct
// computation", 2019, from memory). The lattice holds at most 2³⁰ voxels.
type divider struct {
	c uint64 // 0 for d = 1
	d int
}

func newDivider(d int) divider {
	if d == 1 {
		return divider{d: 1}
	}
	return divider{c: ^uint64(0)/uint64(d) + 1, d: d}
}

// divMod returns n/d and n%d for 0 ≤ n < 2³².
func (v divider) divMod(n int) (int, int) {
	if v.c == 0 {
		return n, 0
	}
	q, _ := bits.Mul64(v.c, uint64(n))
	return int(q), n - int(q)*v.d
}

// coords is Grid.Coords without a division.
func (e *Engine) coords(i int) (x, y, z int) {
	q, x := e.divX.divMod(i)
	z, y = e.divY.divMod(q)
	return x, y, z
}

// neighbours is Grid.Neighbours without a division.
func (e *Engine) neighbours(i int, nb *[6]int) {
	x, y, z := e.coords(i)
	nx, ny, nz := e.g.NX, e.g.NY, e.g.NZ
	row, plane := nx, nx*ny
	nb[0], nb[1] = i-1, i+1
	if x == 0 {
		nb[0] = i + nx - 1
	}
	if x == nx-1 {
		nb[1] = i - nx + 1
	}
	nb[2], nb[3] = i-row, i+row
	if y == 0 {
		nb[2] = i + row*(ny-1)
	}
	if y == ny-1 {
		nb[3] = i - row*(ny-1)
	}
	nb[4], nb[5] = i-plane, i+plane
	if z == 0 {
		nb[4] = i + plane*(nz-1)
	}
	if z == nz-1 {
		nb[5] = i - plane*(nz-1)
	}
}

// setCementMass computes the mass of the cement as tested at the start:
// every anhydrous powder phase — clinker, sulfate carrier, limestone and
// other fillers — as isothermal calorimetry reports heat per gram of the
// cement as tested (ASTM C1702, common practice). Heat, shrinkage and
// water are per gram of this mass.
func (e *Engine) setCementMass() {
	e.cementG = 0
	for i := range kinetics.Phases() {
		ph := &kinetics.Phases()[i]
		if kinetics.IsAnhydrous(ph.ID) {
			e.cementG += float64(e.s.Initial[ph.ID]) * ph.DensityGPerCM3 * e.voxCM3
		}
	}
	e.cementG += e.coarseMassG()
}

// buildClasses puts every exposed voxel of a dissolving phase in its class,
// scanning in index order (deterministic).
func (e *Engine) buildClasses() {
	n := e.g.Len()
	e.cls = make([]uint16, n)
	e.slot = make([]int32, n)
	e.sets = make([][]int32, len(e.dph)*classesPerPhase)
	e.sumW = make([]int, len(e.dph))
	e.sumH = make([]int, len(e.dph))
	e.nAccW = make([]int, len(e.dph))
	e.nAccH = make([]int, len(e.dph))
	for i := range e.cls {
		e.cls[i] = noClass
	}
	for i := 0; i < n; i++ {
		if e.dOf[e.g.Phase[i]] >= 0 {
			e.reclassify(i)
		}
	}
	for c, set := range e.sets {
		e.sets[c] = append(make([]int32, 0, len(set)+len(set)/8), set...)
	}
}

func (e *Engine) exposure(i int) (w, h int) {
	// Any hydrate is product the voxel can dissolve through: a voxel
	// buried in CH, AFt or AFm is never stranded.
	return 6 - bits.OnesCount8(e.solidNb[i]), bits.OnesCount8(e.hydNb[i])
}

// reclassify moves voxel i to the class its phase and exposure call for.
func (e *Engine) reclassify(i int) {
	d := e.dOf[e.g.Phase[i]]
	want := uint16(noClass)
	var w, h int
	if d >= 0 {
		w, h = e.exposure(i)
		if w+h > 0 {
			want = uint16(int(d)*classesPerPhase + int(triIdx[w][h]))
		}
	}
	old := e.cls[i]
	if old == want {
		return
	}
	if old != noClass {
		set := e.sets[old]
		k := e.slot[i]
		last := set[len(set)-1]
		set[k] = last
		e.slot[last] = k
		set = set[:len(set)-1]
		if cap(set) > 256 && len(set) < cap(set)/4 {
			set = append(make([]int32, 0, 2*len(set)), set...) // give memory back as classes shrink
		}
		e.sets[old] = set
		od := int(old) / classesPerPhase
		oc := int(old) % classesPerPhase
		e.sumW[od] -= int(triW[oc])
		e.sumH[od] -= int(triH[oc])
		if triW[oc] > 0 {
			e.nAccW[od]--
		} else {
			e.nAccH[od]--
		}
	}
	e.cls[i] = want
	if want != noClass {
		e.slot[i] = int32(len(e.sets[want]))
		e.sets[want] = append(e.sets[want], int32(i))
		e.sumW[d] += w
		e.sumH[d] += h
		if w > 0 {
			e.nAccW[d]++
		} else {
			e.nAccH[d]++
		}
	}
}

// buildSolidNb computes solidNb and hydNb from the lattice.
func (e *Engine) buildSolidNb() {
	n := e.g.Len()
	e.solidNb = make([]uint8, n)
	e.hydNb = make([]uint8, n)
	ph := e.g.Phase
	var nb [6]int
	for i := 0; i < n; i++ {
		e.g.Neighbours(i, &nb)
		var m, h uint8
		for k, j := range nb {
			if ph[j] != kinetics.Water {
				m |= 1 << k
			}
			if kinetics.IsHydrate(ph[j]) {
				h |= 1 << k
			}
		}
		e.solidNb[i], e.hydNb[i] = m, h
	}
}

// setPhase changes voxel i and keeps counts, classes and solidNb current.
func (e *Engine) setPhase(i int, id kinetics.ID) {
	old := e.g.Phase[i]
	e.s.Count[old]--
	e.s.Count[id]++
	e.g.Phase[i] = id
	var nb [6]int
	e.neighbours(i, &nb)
	// Voxel i is the neighbour in direction k^1 of its neighbour in
	// direction k (also when a short edge makes them repeat).
	if (old == kinetics.Water) != (id == kinetics.Water) {
		for k, j := range nb {
			e.solidNb[j] ^= 1 << (k ^ 1)
		}
	}
	if kinetics.IsHydrate(old) != kinetics.IsHydrate(id) {
		for k, j := range nb {
			e.hydNb[j] ^= 1 << (k ^ 1)
		}
	}
	e.reclassify(i)
	for _, j := range nb {
		if e.dOf[e.g.Phase[j]] >= 0 {
			e.reclassify(j)
		}
	}
}

// TimeH returns the simulated age in hours.
func (e *Engine) TimeH() float64 { return e.s.TimeS / 3600 }

// TempC returns the paste temperature now.
func (e *Engine) TempC() float64 { return e.thermal.At(e.TimeH(), e.HeatJPerG()) }

// HeatJPerG returns the heat released per gram of cement as tested
// (clinker, sulfate and fillers).
func (e *Engine) HeatJPerG() float64 { return e.s.HeatJ / e.cementG }

// CementG returns the mass of cement as tested (clinker, sulfate, fillers)
// in the box at the start, g.
func (e *Engine) CementG() float64 { return e.cementG }

// Grid returns the lattice (owned by the engine; read only).
func (e *Engine) Grid() *Grid { return e.g }

// Events returns the number of events so far and of walk steps taken.
func (e *Engine) Events() (events, steps uint64) { return e.s.Events, e.s.Steps }

// AlphaOf returns the degree of hydration of one phase: the fraction of its
// initial voxels, in the lattice and carried, that have reacted. NaN when
// the paste had none.
func (e *Engine) AlphaOf(id kinetics.ID) float64 {
	den := float64(e.s.Initial[id]) + e.s.Coarse.Initial[id]
	if den == 0 {
		return math.NaN()
	}
	return (float64(e.s.Reacted[id]) + e.s.Coarse.Reacted[id]) / den
}

// Alpha returns the mass-weighted degree of hydration of the clinker
// phases, the carried coarse grains included.
func (e *Engine) Alpha() float64 {
	var num, den float64
	for i := range kinetics.Phases() {
		ph := &kinetics.Phases()[i]
		if ph.Role == kinetics.RoleClinker {
			num += (float64(e.s.Reacted[ph.ID]) + e.s.Coarse.Reacted[ph.ID]) * ph.DensityGPerCM3
			den += (float64(e.s.Initial[ph.ID]) + e.s.Coarse.Initial[ph.ID]) * ph.DensityGPerCM3
		}
	}
	if den == 0 {
		return math.NaN()
	}
	return num / den
}

// Count returns the number of voxels of a phase now; dissolved units not
// yet precipitated are not counted.
func (e *Engine) Count(id kinetics.ID) int { return e.s.Count[id] }

// Dissolved returns the number of dissolved units of a product.
func (e *Engine) Dissolved(id kinetics.ID) int { return len(e.s.Free[id]) }

// WaterConsumedGPerG returns the water bound by the reactions (chemically
// combined plus gel water), per gram of cement.
func (e *Engine) WaterConsumedGPerG() float64 {
	return e.s.WaterMol * kinetics.WaterMolarMass / e.cementG
}

// ChemShrinkageMLPerG returns the chemical shrinkage per gram of cement.
func (e *Engine) ChemShrinkageMLPerG() float64 { return e.s.ShrinkVox * e.voxCM3 / e.cementG }

// NonEvaporableGPerG returns the water that the hydrates keep when D-dried,
// per gram of cement, from each hydrate's bound water in the phase table
// (precipitated and dissolved units, and the carried grains' inner
// product, all count).
func (e *Engine) NonEvaporableGPerG() float64 {
	var w float64
	for i := range kinetics.Phases() {
		ph := &kinetics.Phases()[i]
		if ph.Role != kinetics.RoleHydrate {
			continue
		}
		n := float64(e.s.Count[ph.ID]+len(e.s.Free[ph.ID])) + e.s.Coarse.Inner[ph.ID]
		w += n * e.voxCM3 / ph.MolarVolumeCM3() * ph.BoundWaterMol * kinetics.WaterMolarMass
	}
	return w / e.cementG
}

// Spawned returns, for reaction key, the primary voxels reacted and the
// units made of each product term.
func (e *Engine) Spawned(key string) (reacted int, units []int) {
	i, ok := e.rxIndex[key]
	if !ok {
		return 0, nil
	}
	return e.s.RxVoxels[i], append([]int(nil), e.s.Spawned[i]...)
}

// WaterOut reports whether, in sealed curing, the capillary water ran out.
func (e *Engine) WaterOut() bool { return e.s.WaterOut }

// CHRanOut reports whether, after CH had formed, an SCM with exposed
// surface found no CH to react with (the pozzolans) or to be activated by
// (slag), and the age in hours when that first happened.
func (e *Engine) CHRanOut() (bool, float64) { return e.s.CHOut, e.s.CHOutS / 3600 }
