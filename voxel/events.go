package voxel

import (
	"fmt"
	"math"
	mbits "math/bits"

	"gelspace/kinetics"
)

// event kinds after the dissolution events (one per dissolving phase).
const (
	evCSHNucleation = iota
	evCHNucleation
	evAttempt // one per product, in e.products order
)

// AdvanceTo runs events until the age reaches untilH hours (or nothing can
// happen any more). Stopping at an intermediate age does not change what
// follows: a drawn event that falls beyond untilH is kept for the next call.
func (e *Engine) AdvanceTo(untilH float64) error {
	stop := untilH * 3600
	for e.s.TimeS < stop {
		// The rates are a function of the state and of the temperature:
		// when the clock's step leaves the temperature as it was, the
		// rates drawn for the step are those at its end too.
		var total float64
		fresh := false
		if !e.s.Pending {
			total = e.computeRates()
			if total <= 0 || math.IsNaN(total) {
				e.s.TimeS = stop
				return nil
			}
			e.s.NextS = e.s.TimeS - math.Log(1-e.r.Float64())/total
			e.s.Pending = true
			fresh = true
		}
		if e.s.NextS > stop {
			e.s.TimeS = stop
			return nil
		}
		e.s.TimeS = e.s.NextS
		e.s.Pending = false
		if !fresh || e.TempC() != e.arrT {
			total = e.computeRates()
		}
		if total <= 0 {
			continue
		}
		if err := e.fire(total); err != nil {
			return err
		}
		e.s.Events++
		if e.guard != nil && e.s.Events%GuardEvery == 0 {
			if err := e.guard(e.s.Events, e.s.TimeS); err != nil {
				return err
			}
		}
	}
	return nil
}

// computeRates fills e.rates (1/s) and returns their sum.
func (e *Engine) computeRates() float64 {
	tC := e.TempC()
	if tC != e.arrT {
		for d := range e.dph {
			e.arrD[d] = kinetics.Arrhenius(e.ea[d], tC)
		}
		e.arrNuc = kinetics.Arrhenius(e.p.NucleationEaKJPerMol, tC)
		e.delta0 = e.p.ProductLengthAt(tC)
		e.arrT = tC
	}
	water := float64(e.s.Count[kinetics.Water])
	fw := e.p.WaterFactor(e.waterPorosity()) // paste basis: carried outlines included
	sSi := e.silicateSaturation()
	sigma := e.sulfateAvailability()
	poolSat := e.p.GypsumSolubilityMolPerL * water * e.voxCM3 / 1000
	chAvail := -1.0
	if e.anySCM {
		chAvail = e.chAvailable()
	}
	var total float64
	for d, id := range e.dph {
		m := e.velPerS[d] * e.arrD[d] * fw * e.p.SulfateRetardation(e.sulfFac[d], sigma)
		switch id {
		case kinetics.C3S, kinetics.C2S:
			m *= math.Max(0, 1-sSi)
		case kinetics.Gypsum, kinetics.Hemihydrate, kinetics.Anhydrite:
			if poolSat <= 0 {
				m = 0
			} else {
				m *= math.Max(0, 1-e.s.PoolSO4Mol/poolSat)
			}
		}
		if need := e.chNeed[d]; need >= 0 && m > 0 && !(chAvail > 0 && chAvail >= need) {
			// CH gate: no CH to take (pozzolans) or to activate (slag).
			if e.s.CHSeen && !e.s.CHOut && e.nAccW[d]+e.nAccH[d] > 0 {
				e.s.CHOut, e.s.CHOutS = true, e.s.TimeS
			}
			m = 0
		}
		e.cc.mul[d] = m // the same law for the carried grains
		var r float64
		if e.bulk[d] > 0 { // sub-voxel powder: the voxel's own surface
			r = e.bulk[d] * (float64(e.nAccW[d]) + e.beta[d]*float64(e.nAccH[d])) * m
		} else {
			r = (float64(e.sumW[d]) + e.beta[d]*float64(e.sumH[d])) * m
		}
		e.rates[d] = r
		total += r
	}
	k := len(e.dph)
	// C-S-H nucleates on silicate faces in contact with water.
	var silFaces float64
	for _, id := range []kinetics.ID{kinetics.C3S, kinetics.C2S} {
		if d := e.dOf[id]; d >= 0 {
			silFaces += float64(e.sumW[d])
		}
	}
	r := 0.0
	if len(e.s.Free[kinetics.CSHOuter]) > 0 {
		r = e.p.CSHNucleationPerUM2H / 3600 * silFaces * e.g.VoxelUM * e.g.VoxelUM * math.Min(1, sSi) * e.arrNuc
	}
	e.rates[k+evCSHNucleation] = r
	total += r
	// CH nucleates in the pore solution above its saturation.
	r = 0
	if water > 0 {
		if over := float64(len(e.s.Free[kinetics.CH]))/(e.p.CHSaturation*water) - 1; over > 0 {
			r = e.p.CHNucleationPerUM3H / 3600 * water * math.Pow(e.g.VoxelUM, 3) * over * over * e.arrNuc
		}
	}
	e.rates[k+evCHNucleation] = r
	total += r
	for j, id := range e.products {
		r := e.p.AttemptPerH / 3600 * float64(len(e.s.Free[id])) * e.arrNuc
		e.rates[k+evAttempt+j] = r
		total += r
	}
	total += e.coarseRates(k + evAttempt + len(e.products))
	return total
}

// chAvailable returns the CH (mol) the solution can supply to the SCMs
// now. The pozzolanic reactions need a pore solution saturated with CH,
// which only portlandite in the paste keeps (common practice: the
// pozzolanic reaction starts once portlandite has formed): without CH
// crystals only the co-reactant pool counts; with them, the dissolved CH
// units and the exposed CH voxels too. It also records that portlandite
// has formed.
func (e *Engine) chAvailable() float64 {
	if e.s.Count[kinetics.CH] == 0 {
		return e.s.CoPool[kinetics.CH]
	}
	e.s.CHSeen = true
	molVox := e.voxCM3 / kinetics.Lookup(kinetics.CH).MolarVolumeCM3()
	n := len(e.s.Free[kinetics.CH])
	if d := e.dOf[kinetics.CH]; d >= 0 {
		base := int(d) * classesPerPhase
		for c := 1; c < classesPerPhase; c++ {
			n += len(e.sets[base+c])
		}
	}
	return e.s.CoPool[kinetics.CH] + float64(n)*molVox
}

func (e *Engine) silicateSaturation() float64 {
	water := float64(e.s.Count[kinetics.Water])
	if water <= 0 {
		return 1
	}
	return float64(len(e.s.Free[kinetics.CSHOuter])) / (e.p.SilicateSaturation * water)
}

// sulfateAvailability returns σ of kinetics.SulfateAvailability: the
// dissolved pool plus the exposed sulfate surface (faces touching water,
// and faces under product weighted by β) times the supply length.
func (e *Engine) sulfateAvailability() float64 {
	a := e.g.VoxelUM * e.g.VoxelUM * e.p.SulfateSupplyLengthUM
	surf := 0.0
	for d, m := range e.sulfMol {
		if m > 0 {
			surf += (float64(e.sumW[d]) + e.beta[d]*float64(e.sumH[d]) + e.coarseSulfateFaces(d)) * a * m
		}
	}
	waterL := float64(e.s.Count[kinetics.Water]) * e.voxCM3 / 1000
	return e.p.SulfateAvailability(e.s.PoolSO4Mol, surf, waterL)
}

// fire chooses and runs one event in proportion to the rates.
func (e *Engine) fire(total float64) error {
	u := e.r.Float64() * total
	k := 0
	for ; k < len(e.rates)-1; k++ {
		if u < e.rates[k] {
			break
		}
		u -= e.rates[k]
	}
	for e.rates[k] == 0 && k > 0 { // rounding at the top end
		k--
	}
	nd := len(e.dph)
	switch {
	case k < nd:
		i := e.pickSurface(k, true)
		if i < 0 {
			return fmt.Errorf("voxel: internal error: no surface voxel of %s for a dissolution event", kinetics.Lookup(e.dph[k]).Key)
		}
		if e.accept(i, k) {
			e.dissolve(i)
		}
	case k == nd+evCSHNucleation:
		e.nucleateCSH()
	case k == nd+evCHNucleation:
		e.nucleateCH()
	case k >= nd+evAttempt+len(e.products):
		e.fireCoarse(k - nd - evAttempt - len(e.products))
	default:
		e.attempt(e.products[k-nd-evAttempt])
	}
	return nil
}

// pickSurface returns a member of phase d's classes chosen with weight
// n_w + β·n_p (weighted) or uniformly over exposed voxels, or −1.
func (e *Engine) pickSurface(d int, weighted bool) int {
	base := d * classesPerPhase
	var tot float64
	for c := 1; c < classesPerPhase; c++ {
		tot += float64(len(e.sets[base+c])) * e.classWeight(d, c, weighted)
	}
	if tot <= 0 {
		return -1
	}
	u := e.r.Float64() * tot
	last := -1
	for c := 1; c < classesPerPhase; c++ {
		m := len(e.sets[base+c])
		if m == 0 {
			continue
		}
		w := float64(m) * e.classWeight(d, c, weighted)
		if w <= 0 {
			continue
		}
		last = c
		if u < w {
			break
		}
		u -= w
	}
	if last < 0 {
		return -1
	}
	set := e.sets[base+last]
	return int(set[e.r.IntN(len(set))])
}

func (e *Engine) classWeight(d, c int, weighted bool) float64 {
	if !weighted {
		return 1
	}
	if e.bulk[d] > 0 { // sub-voxel powder: the voxel's surface, open to water or under product
		if triW[c] > 0 {
			return 1
		}
		return e.beta[d]
	}
	return float64(triW[c]) + e.beta[d]*float64(triH[c])
}

// accept thins a dissolution event of voxel i (phase index d), chosen with
// the bound weight n_w + β·n_p, down to its true weight n_w + β·f·n_p: f is
// the through-product factor of the voxel's grain, 1/(1 + δ/δ0), where δ is
// the depth to which the grain has reacted — the thickness of the product
// it must dissolve through — and δ0 the product length of the kinetics
// table. Thinning keeps the Gillespie clock exact (the rejected share of
// the bound is a null event) while the rate classes stay uniform.
func (e *Engine) accept(i, d int) bool {
	c := int(e.cls[i]) % classesPerPhase
	h := float64(triH[c])
	if h == 0 || e.delta0 <= 0 || e.bulk[d] > 0 {
		return true
	}
	w := float64(triW[c])
	f := 1.0
	if p := e.g.Particle[i]; p > 0 && int(p) < len(e.partInit) && e.partInit[p] > 0 {
		r0 := math.Cbrt(3 * float64(e.partInit[p]) / (4 * math.Pi))
		depth := r0 * (1 - math.Cbrt(float64(e.s.PartLeft[p])/float64(e.partInit[p]))) * e.g.VoxelUM
		f = 1 / (1 + depth/e.delta0)
	}
	bound := w + e.beta[d]*h
	return e.r.Float64()*bound < w+e.beta[d]*f*h
}

// dissolve runs the reaction driven by voxel i of a dissolving phase.
func (e *Engine) dissolve(i int) {
	id := e.g.Phase[i]
	d := e.dOf[id]
	switch {
	case e.seq[id] != nil:
		e.dissolveInSequence(i, id)
	case kinetics.Lookup(id).Role == kinetics.RoleSulfate:
		e.dissolveSulfate(i)
	default:
		rx := e.rxOfD[d]
		if rx < 0 {
			return
		}
		if !e.supplyCo(&kinetics.Reactions()[rx], e.voxCM3/kinetics.Lookup(id).MolarVolumeCM3()) {
			return // the CH gate of computeRates keeps this rare
		}
		e.react(i, rx)
	}
}

// supplyCo takes from the solution the co-reactants of reaction r for mol
// of its primary phase. When the solution cannot supply them all it takes
// none and reports false (what ensure dissolved stays in the pools).
func (e *Engine) supplyCo(r *kinetics.Reaction, mol float64) bool {
	for _, c := range r.Co {
		if !e.ensure(c.Phase, c.Mol*mol/r.PrimaryMol) {
			return false
		}
	}
	for _, c := range r.Co {
		e.withdraw(c.Phase, c.Mol*mol/r.PrimaryMol)
	}
	return true
}

// sequenceReaction returns the reaction of phase id's sequence
// (kinetics.Sequence) to run for mol of it: the first whose co-reactants
// the solution can supply, taken, or the last (which needs none) when none
// can.
func (e *Engine) sequenceReaction(id kinetics.ID, mol float64) int {
	rxs := kinetics.Reactions()
	seq := e.seq[id]
	for k, rx := range seq {
		if e.supplyCo(&rxs[rx], mol) || k == len(seq)-1 {
			return rx
		}
	}
	return -1
}

// dissolveInSequence runs the first reaction of the phase's sequence
// (kinetics.Sequence) whose co-reactants the solution can supply: for the
// aluminates, ettringite while sulfate lasts, carboaluminates while calcite
// lasts, monosulfate from ettringite, hydrogarnet when nothing else is left.
func (e *Engine) dissolveInSequence(i int, id kinetics.ID) {
	if rx := e.sequenceReaction(id, e.voxCM3/kinetics.Lookup(id).MolarVolumeCM3()); rx >= 0 {
		e.react(i, rx)
	}
}

// react turns voxel i into pore water and the products of reaction rx into
// dissolved units that start walking from i.
func (e *Engine) react(i, rx int) {
	r := &kinetics.Reactions()[rx]
	id := e.g.Phase[i]
	ph := kinetics.Lookup(id)
	molVox := e.voxCM3 / ph.MolarVolumeCM3()
	e.s.HeatJ += r.HeatJPerG * ph.DensityGPerCM3 * e.voxCM3
	e.s.WaterMol += r.WaterMol * molVox / r.PrimaryMol
	shrink := r.ChemicalShrinkage()
	e.s.ShrinkVox += shrink
	e.s.Reacted[id]++
	e.s.RxVoxels[rx]++
	e.leave(i)
	e.setPhase(i, kinetics.Water)
	for t, term := range r.Products {
		e.s.Acc[rx][t] += r.VoxelsPerVoxel(term.Phase)
		n := int(e.s.Acc[rx][t])
		e.s.Acc[rx][t] -= float64(n)
		e.s.Spawned[rx][t] += n
		if term.Phase == kinetics.Gypsum { // dissolved sulfate from hemihydrate or anhydrite
			e.s.PoolSO4Mol += term.Mol * molVox / r.PrimaryMol
			continue
		}
		for ; n > 0; n-- {
			pos, ok := e.walk(int32(i), e.rules[term.Phase], term.Phase, e.spawnSteps)
			if !ok {
				e.addFree(term.Phase, pos, 0)
			}
		}
	}
	if e.sealed {
		e.s.ShrinkAcc += shrink
		for e.s.ShrinkAcc >= 1 {
			e.s.ShrinkAcc--
			e.emptyOne()
		}
	}
}

// dissolveSulfate moves a sulfate voxel into the dissolved pool.
func (e *Engine) dissolveSulfate(i int) {
	id := e.g.Phase[i]
	switch id {
	case kinetics.Hemihydrate:
		e.react(i, e.rxIndex[kinetics.RxHemihydrate])
	case kinetics.Anhydrite:
		e.react(i, e.rxIndex[kinetics.RxAnhydrite])
	default:
		e.s.PoolSO4Mol += e.voxCM3 / kinetics.Lookup(id).MolarVolumeCM3()
		e.s.Reacted[id]++
		e.leave(i)
		e.setPhase(i, kinetics.Water)
	}
}

// leave records that anhydrous voxel i is leaving its grain.
func (e *Engine) leave(i int) {
	if p := e.g.Particle[i]; p > 0 && int(p) < len(e.s.PartLeft) && kinetics.IsAnhydrous(e.g.Phase[i]) {
		e.s.PartLeft[p]--
	}
}

// ensure makes the solution hold at least mol of co-reactant phase id,
// dissolving exposed voxels of it as needed (sulfate carriers into the
// sulfate pool; ettringite, calcite and CH into their co-reactant pools).
// It reports false when the exposed solid cannot cover it; what was
// dissolved stays in the pool.
func (e *Engine) ensure(id kinetics.ID, mol float64) bool {
	if id == kinetics.Gypsum {
		for e.s.PoolSO4Mol < mol {
			i := -1
			for _, sid := range []kinetics.ID{kinetics.Gypsum, kinetics.Hemihydrate, kinetics.Anhydrite} {
				if d := e.dOf[sid]; d >= 0 {
					if i = e.pickSurface(int(d), false); i >= 0 {
						break
					}
				}
			}
			if i < 0 {
				return false
			}
			e.dissolveSulfate(i)
		}
		return true
	}
	d := int(e.dOf[id])
	molVox := e.voxCM3 / kinetics.Lookup(id).MolarVolumeCM3()
	if id == kinetics.CH { // dissolved CH first: the solution is well mixed
		for e.s.CoPool[id] < mol && len(e.s.Free[id]) > 0 {
			e.popFree(id)
			e.s.CoPool[id] += molVox
		}
	}
	for e.s.CoPool[id] < mol {
		if d < 0 {
			return false
		}
		i := e.pickSurface(d, false)
		if i < 0 {
			return false
		}
		e.s.CoPool[id] += molVox
		e.s.Reacted[id]++
		e.leave(i)
		e.setPhase(i, kinetics.Water)
	}
	return true
}

// withdraw takes mol of co-reactant id from its pool (after ensure).
func (e *Engine) withdraw(id kinetics.ID, mol float64) {
	if id == kinetics.Gypsum {
		e.s.PoolSO4Mol -= mol
		return
	}
	e.s.CoPool[id] -= mol
}

// walk moves a dissolved unit of product q from pos through pore water for
// up to steps steps and precipitates it where it sticks. It returns the
// final position and whether the unit precipitated. This is the hot loop of
// the engine. It tracks coordinates to avoid divisions and draws three
// random bits per step (rejecting 6 and 7). It reads the voxel's solidNb
// bits rather than its neighbours' phases, which it reads only where a bit
// says they are not water; and as the lattice does not change while the
// unit walks, the sticking value of a voxel is computed once for the steps
// the unit stays there (a move into a solid is blocked). A unit shut in by
// six solid neighbours that cannot stick there only uses up its remaining
// steps' random bits, which walk skips over a word at a time. The random
// numbers drawn, and their order, are those of a walk that tests the six
// neighbours at every step.
func (e *Engine) walk(pos int32, rule *stickRule, q kinetics.ID, steps int) (int32, bool) {
	g := e.g
	if g.Phase[pos] != kinetics.Water {
		p, ok := e.relocate(int(pos))
		if !ok {
			return pos, false
		}
		pos = int32(p)
	}
	x, y, z := g.Coords(int(pos))
	c := [3]int{x, y, z}
	i := int(pos)
	solid := e.solidNb
	var bits uint64
	nbits := 0
	s := 0
	for {
		// At voxel i, after s steps.
		m := solid[i]
		best := rule.inWaterVal
		if m != 0 {
			best = e.stickValue(i, &c, m, rule)
		}
		if m == 0x3f && best <= 0 {
			// Shut in: no move can succeed and nothing sticks.
			e.skipSteps(bits, nbits, steps-s)
			e.s.Steps += uint64(steps)
			return int32(i), false
		}
		for {
			if best > 0 && (best >= 1 || e.r.Float32() < best) {
				e.precipitate(i, q)
				e.s.Steps += uint64(s)
				return int32(i), true
			}
			if s == steps {
				e.s.Steps += uint64(s)
				return int32(i), false
			}
			s++
			var dir int
			for {
				if nbits < 3 {
					bits, nbits = e.r.Uint64(), 64
				}
				dir = int(bits & 7)
				bits >>= 3
				nbits -= 3
				if dir < 6 {
					break
				}
			}
			if m>>dir&1 == 0 { // not blocked by a solid or empty voxel
				i = e.step(i, &c, dir)
				break
			}
		}
	}
}

// step returns the neighbour of voxel i at coordinates c in direction dir
// (the order of Grid.Neighbours) and moves c there.
func (e *Engine) step(i int, c *[3]int, dir int) int {
	a := dir >> 1
	old := c[a]
	nc := old + 2*(dir&1) - 1
	if nc < 0 {
		nc = e.dim[a] - 1
	} else if nc == e.dim[a] {
		nc = 0
	}
	c[a] = nc
	return i + (nc-old)*e.stride[a]
}

// skipSteps draws the random bits of n more steps of a walk that cannot
// move, given the bits left over: each step takes three bits, and a step
// that draws 6 or 7 draws again.
func (e *Engine) skipSteps(bits uint64, nbits, n int) {
	for ; n > 0 && nbits >= 3; nbits -= 3 {
		if bits&7 < 6 {
			n--
		}
		bits >>= 3
	}
	// A word gives 21 groups of three bits (its top bit is left); a group
	// is rejected when its two high bits are set.
	const low = 0x1249249249249249 // bit 0 of each group
	for n > 0 {
		w := e.r.Uint64()
		n -= 21 - mbits.OnesCount64(w>>1&(w>>2)&low)
	}
}

// stickValue returns the probability that a unit sticks at pore-water
// voxel i, at coordinates c and with solidNb bits m ≠ 0: the maximum over
// the neighbours of the rule's value of their phase, or of its seeded
// value when a neighbour is a seed. It reads the phases of the neighbours
// that are not water only: water has the same value at every neighbour,
// and the maximum does not depend on the order.
func (e *Engine) stickValue(i int, c *[3]int, m uint8, r *stickRule) float32 {
	var best float32
	seeded := false
	if m != 0x3f { // some water neighbour
		best = r.inWaterVal
		seeded = r.seed[kinetics.Water]
	}
	var qs [6]kinetics.ID
	n := 0
	ph := e.g.Phase
	for mm := m; mm != 0; mm &= mm - 1 {
		k := mbits.TrailingZeros8(mm)
		a := k >> 1
		nc := c[a] + 2*(k&1) - 1
		if nc < 0 {
			nc = e.dim[a] - 1
		} else if nc == e.dim[a] {
			nc = 0
		}
		q := ph[i+(nc-c[a])*e.stride[a]]
		qs[n] = q
		n++
		if v := r.on[q]; v > best {
			best = v
		}
		if r.seed[q] {
			seeded = true
		}
	}
	if seeded {
		if m != 0x3f {
			if v := r.seeded[kinetics.Water]; v > best {
				best = v
			}
		}
		for _, q := range qs[:n] {
			if v := r.seeded[q]; v > best {
				best = v
			}
		}
	}
	return best
}

// precipitate turns pore-water voxel i into product q; C-S-H is inner
// product inside an original grain outline and outer product elsewhere.
func (e *Engine) precipitate(i int, q kinetics.ID) {
	if q == kinetics.CSHOuter && e.g.Particle[i] != 0 {
		q = kinetics.CSHInner
	}
	e.setPhase(i, q)
}

// relocate finds a pore-water voxel next to i, or anywhere, for a unit whose
// voxel has been filled or emptied.
func (e *Engine) relocate(i int) (int, bool) {
	var nb [6]int
	e.g.Neighbours(i, &nb)
	off := e.r.IntN(6)
	for k := 0; k < 6; k++ {
		if j := nb[(k+off)%6]; e.g.Phase[j] == kinetics.Water {
			return j, true
		}
	}
	if e.s.Count[kinetics.Water] == 0 {
		return i, false
	}
	for try := 0; try < 256; try++ {
		if j := e.r.IntN(e.g.Len()); e.g.Phase[j] == kinetics.Water {
			return j, true
		}
	}
	return i, false
}

// attempt lets one dissolved unit of q try to precipitate.
func (e *Engine) attempt(q kinetics.ID) {
	free, fails := e.s.Free[q], e.s.Fails[q]
	k := e.r.IntN(len(free))
	rule := e.rules[q]
	if fails[k] >= maxFails && e.productAbundant(q) {
		rule = &e.anySolid
	}
	pos, ok := e.walk(free[k], rule, q, e.walkSteps)
	if ok {
		e.removeFree(q, k)
		return
	}
	free[k] = pos
	if fails[k] < 255 {
		fails[k]++
	}
}

// productAbundant reports whether product q already fills a thousandth of
// the box. Only then is a unit that keeps failing taken to be trapped in an
// isolated pore: before, it fails because the product has not nucleated
// yet, and it must wait for nucleation (the dormant period).
func (e *Engine) productAbundant(q kinetics.ID) bool {
	n := e.s.Count[q]
	if q == kinetics.CSHOuter {
		n += e.s.Count[kinetics.CSHInner]
	}
	return n*1000 >= e.g.Len()
}

func (e *Engine) addFree(q kinetics.ID, pos int32, fails uint8) {
	e.s.Free[q] = append(e.s.Free[q], pos)
	e.s.Fails[q] = append(e.s.Fails[q], fails)
}

func (e *Engine) removeFree(q kinetics.ID, k int) {
	free, fails := e.s.Free[q], e.s.Fails[q]
	last := len(free) - 1
	free[k], fails[k] = free[last], fails[last]
	e.s.Free[q], e.s.Fails[q] = free[:last], fails[:last]
}

// popFree removes one dissolved unit of q (the solution is well mixed, so
// which one does not matter) and returns its position.
func (e *Engine) popFree(q kinetics.ID) int32 {
	k := e.r.IntN(len(e.s.Free[q]))
	pos := e.s.Free[q][k]
	e.removeFree(q, k)
	return pos
}

// nucleateCSH forms a C-S-H nucleus in the water next to a silicate face.
func (e *Engine) nucleateCSH() {
	var weights [2]float64
	ids := [2]kinetics.ID{kinetics.C3S, kinetics.C2S}
	for k, id := range ids {
		if d := e.dOf[id]; d >= 0 {
			weights[k] = float64(e.sumW[d])
		}
	}
	if weights[0]+weights[1] <= 0 {
		return
	}
	k := 0
	if e.r.Float64()*(weights[0]+weights[1]) >= weights[0] {
		k = 1
	}
	d := int(e.dOf[ids[k]])
	// Choose a face in contact with water: weight by n_w only.
	save := e.beta[d]
	e.beta[d] = 0
	i := e.pickSurface(d, true)
	e.beta[d] = save
	if i < 0 {
		return
	}
	var nb [6]int
	e.g.Neighbours(i, &nb)
	off := e.r.IntN(6)
	for j := 0; j < 6; j++ {
		if w := nb[(j+off)%6]; e.g.Phase[w] == kinetics.Water {
			e.popFree(kinetics.CSHOuter)
			e.precipitate(w, kinetics.CSHOuter)
			return
		}
	}
}

// nucleateCH forms a CH crystal where a dissolved CH unit stands.
func (e *Engine) nucleateCH() {
	pos := int(e.popFree(kinetics.CH))
	if e.g.Phase[pos] != kinetics.Water {
		p, ok := e.relocate(pos)
		if !ok {
			e.addFree(kinetics.CH, int32(pos), 0)
			return
		}
		pos = p
	}
	e.precipitate(pos, kinetics.CH)
}

// emptyOne empties the pore-water voxel at the centre of the largest pore
// (sealed curing).
func (e *Engine) emptyOne() {
	for {
		for e.s.EmptyPos < len(e.s.EmptyList) {
			i := int(e.s.EmptyList[e.s.EmptyPos])
			e.s.EmptyPos++
			if e.g.Phase[i] == kinetics.Water {
				e.setPhase(i, kinetics.Empty)
				return
			}
		}
		if e.s.Count[kinetics.Water] == 0 {
			e.s.WaterOut = true
			return
		}
		e.refreshEmptyList()
	}
}

// refreshEmptyList ranks pore-water voxels by their city-block distance to
// the nearest solid voxel, largest first, and keeps the top tenth.
func (e *Engine) refreshEmptyList() {
	n := e.g.Len()
	ph := e.g.Phase
	dist := make([]uint8, n)
	const unset = 255
	for i, p := range ph {
		if kinetics.IsPore(p) {
			dist[i] = unset
		}
	}
	var nb [6]int
	maxD := 0
	for k := 1; k < unset; k++ {
		changed := false
		for i := 0; i < n; i++ {
			if dist[i] != unset {
				continue
			}
			e.g.Neighbours(i, &nb)
			for _, j := range nb {
				if int(dist[j]) == k-1 {
					dist[i] = uint8(k)
					changed = true
					break
				}
			}
		}
		if !changed {
			break
		}
		maxD = k
	}
	water := e.s.Count[kinetics.Water]
	want := water/10 + 1
	list := e.s.EmptyList[:0]
	for k := unset; k >= 0 && len(list) < want; k-- {
		if k < unset && k > maxD {
			continue
		}
		for i := 0; i < n; i++ {
			if int(dist[i]) == k && ph[i] == kinetics.Water {
				list = append(list, int32(i))
			}
		}
	}
	e.s.EmptyList = list
	e.s.EmptyPos = 0
}
