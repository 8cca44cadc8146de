package voxel

import (
	"errors"
	"fmt"
	"math"

	"gelspace/kinetics"
)

// # Carried coarse grains
//
// A box of L voxels holds grains up to L/2 (see PSD.Classes); the powder
// coarser than that is not left out but carried by the engine as
// populations of shrinking spheres outside the lattice ("carried grains").
// The box then stands for the paste around them: it holds all the water of
// the mix at its w/c and the finer powder, and the carried grains add a
// virtual volume Vc (in voxels) — their original outlines — so that the
// paste is the lattice plus Vc. Every gram of the powder takes part: the
// cement mass, α, heat, water, shrinkage and bound water include the
// carried grains.
//
// Rate law. A carried grain dissolves by the rate law of the lattice's
// surface voxels, with the same constants and solution state: per phase i
// of a carried population of N grains of radius r (voxels, from the grain's
// remaining volume),
//
//	k_i = v_i/h · A · s_i · [(1 − θ_i) + θ_i β_i f(δ)] · g_i · A_i(T) · F_w    [voxels/s]
//
// with A = κ · 4π r² · N the grains' area in voxel faces, κ the ratio of a
// digitised sphere's exposed faces to its smooth area (about 1.5: the
// lattice's rate law is per voxel face, so a carried grain takes the area a
// digitised grain of its size would have, and the result does not depend
// on where the box puts the cut), s_i the volume share of phase i in the
// grain's remaining solid (phase domains are small against a coarse grain,
// so its surface shows the phases in their shares), θ_i the fraction of
// phase i's exposed faces in the lattice that are covered by product (the
// carried grains are covered as the lattice grains of the same phase are),
// β_i the through-product factor, f(δ) = 1/(1 + δ/δ0(T)) with δ = r0 − r the
// depth (µm) the carried grain has reacted to, g_i the solution factor
// (silicate undersaturation, sulfate retardation, sulfate pool) and F_w the
// water and space law. Each event reacts one voxel's worth of one phase of
// one population and size bin chosen in proportion to its rate (Gillespie's
// direct method, as for the lattice). Their sulfate surface counts in the
// sulfate availability σ. Not carried over: C-S-H nucleation on the carried
// grains' surface (their share of the powder's surface is small: the
// coarse tail holds few m²/kg), and the calcite of carried grains as a
// co-reactant.
//
// Products, water and space. A carried reaction runs the same reaction
// of the kinetics table as a lattice voxel of that phase would, with the
// same co-reactants drawn from the solution pools. One voxel of its
// products (the volume the dissolved solid leaves), shared among them in
// their proportions, stays inside the carried grain's outline as inner
// product (virtual, counted in the phase volumes and bound water); the rest
// leaves as dissolved units that start from a random pore-water voxel of
// the lattice and precipitate through the engine's walks and growth rules.
// So a carried reaction takes (products − 1) voxels of the lattice's pore
// space, exactly as a lattice voxel's reaction does (its voxel turns to
// water and the products fill pore voxels), and water and space are shared.
// The carried outline volume Vc stays constant; what dissolves without
// solid products (a sulfate carrier into the pool) leaves water-filled
// virtual pore space in it. The carried grains' space is not taken from the
// lattice's pore space: the lattice holds exactly the mix's water and its
// finer powder, and the carried solid is real solid outside it. Quantities
// of the paste (porosities, phase volumes, the water factor F_w) are over
// the lattice plus Vc; connectivity and D/D0 are of the lattice, the
// matrix between the carried grains.

// CoarseBin is one size class of the coarse tail: grains of DiameterUM
// holding Fraction of the whole powder's volume.
type CoarseBin struct {
	DiameterUM float64
	Fraction   float64
}

// coarseBinRatio is the ratio of the upper to the lower size of a coarse
// tail bin.
const coarseBinRatio = 1.15

// CoarseTail digitises the powder coarser than (dmax + ½) voxels of
// voxelUM µm — what a box with largest class dmax leaves out — into
// log-spaced size bins of ratio 1.15. Each bin's diameter is the
// volume-weighted harmonic mean of its sizes, so that the bins carry the
// tail's specific surface. The fractions sum to Classes.Truncated.
func (p *PSD) CoarseTail(voxelUM float64, dmax int) []CoarseBin {
	lo := (float64(dmax) + 0.5) * voxelUM
	hi := p.MaxSizeUM()
	if p.rrN > 0 {
		hi = p.rrXUM * math.Pow(-math.Log(1e-9), 1/p.rrN) // 10⁻⁹ retained
	}
	if !(hi > lo) {
		return nil
	}
	nb := int(math.Ceil(math.Log(hi/lo) / math.Log(coarseBinRatio)))
	r := math.Pow(hi/lo, 1/float64(nb))
	var bins []CoarseBin
	a := lo
	for k := 0; k < nb; k++ {
		b := a * r
		if k == nb-1 {
			b = math.Inf(1)
		}
		frac := p.Passing(b) - p.Passing(a)
		if k == nb-1 {
			frac = 1 - p.Passing(a)
		}
		if frac > 1e-12 {
			// ∫ dP/x over the bin, midpoint rule in log size
			top := math.Min(b, hi)
			const sub = 16
			var inv, sum float64
			q := math.Pow(top/a, 1.0/sub)
			x0 := a
			for j := 0; j < sub; j++ {
				x1 := x0 * q
				dp := p.Passing(x1) - p.Passing(x0)
				inv += dp / math.Sqrt(x0*x1)
				sum += dp
				x0 = x1
			}
			d := math.Sqrt(a * top)
			if sum > 0 && inv > 0 {
				d = sum / inv
			}
			bins = append(bins, CoarseBin{DiameterUM: d, Fraction: frac})
		}
		a = b
	}
	return bins
}

// CarriedPopulation is one kind of carried grain: single-phase or
// multi-phase (polymineral clinker), with the carried volume of each phase
// in voxel volumes.
type CarriedPopulation struct {
	Phases []kinetics.ID
	Voxels []float64
}

// coarseState is the carried grains' part of the engine state (saved in
// checkpoints).
type coarseState struct {
	Pops    []coarsePop
	Initial [kinetics.NumIDs]float64 // carried voxels of each phase at the start
	Reacted [kinetics.NumIDs]float64 // carried voxels of each phase reacted
	Inner   [kinetics.NumIDs]float64 // virtual product voxels in the outlines
	Void    float64                  // virtual water-filled voxels in the outlines
	Volume  float64                  // Vc: the outlines' volume, voxels
	Acc     [][]float64              // per reaction, per product term: fractional units
}

type coarsePop struct {
	Phases []kinetics.ID
	Bins   []coarseGrains
}

// coarseGrains are the N grains of one size bin of one population.
type coarseGrains struct {
	N  float64   // number of grains
	R0 float64   // initial radius, voxels
	V  []float64 // remaining voxels of each phase of the population
}

func (c coarseState) clone() coarseState {
	d := c
	d.Pops = make([]coarsePop, len(c.Pops))
	for i, p := range c.Pops {
		d.Pops[i] = coarsePop{Phases: p.Phases, Bins: make([]coarseGrains, len(p.Bins))}
		for j, b := range p.Bins {
			d.Pops[i].Bins[j] = coarseGrains{N: b.N, R0: b.R0, V: append([]float64(nil), b.V...)}
		}
	}
	d.Acc = make([][]float64, len(c.Acc))
	for k := range c.Acc {
		d.Acc[k] = append([]float64(nil), c.Acc[k]...)
	}
	return d
}

// coarseCache holds sums over the carried grains that change only when a
// carried grain reacts or the temperature changes (not saved; rebuilt).
type coarseCache struct {
	valid  bool
	delta0 float64
	// per dissolving phase index d: Σ A·s (S1) and Σ A·s·f(δ) (S2), faces
	s1, s2 [kinetics.NumIDs]float64
	// per dissolving phase index d: rate factor of the phase besides its
	// surface (v/h · A(T) · F_w · g), set by computeRates
	mul [kinetics.NumIDs]float64
}

// sphereFaceRatio is κ: exposed faces of a digitised sphere over its
// smooth area in face units, π d², taken at a diameter large enough to be
// near the limit.
func sphereFaceRatio() float64 {
	const d = 40
	return float64(sphereFaces(d)) / (math.Pi * d * d)
}

// Carry adds carried coarse grains to a fresh engine: each population's
// volumes are shared among the bins in proportion to their fractions. It
// must be called before the first event.
func (e *Engine) Carry(pops []CarriedPopulation, bins []CoarseBin) error {
	if e.s.Events > 0 || e.s.TimeS > 0 {
		return errors.New("voxel: Carry after the run started")
	}
	var tot float64
	for _, b := range bins {
		if !(b.Fraction >= 0) || !(b.DiameterUM > 0) {
			return fmt.Errorf("voxel: coarse bin %g µm, fraction %g: need diameter > 0, fraction ≥ 0", b.DiameterUM, b.Fraction)
		}
		tot += b.Fraction
	}
	cs := coarseState{}
	if tot > 0 {
		for _, p := range pops {
			if len(p.Phases) != len(p.Voxels) {
				panic("voxel: Carry: phases and voxels differ in length")
			}
			vol := 0.0
			for k, v := range p.Voxels {
				if !(v >= 0) || math.IsInf(v, 0) {
					return fmt.Errorf("voxel: carried %g voxels of %s: must be ≥ 0", v, kinetics.Lookup(p.Phases[k]).Key)
				}
				vol += v
			}
			if vol == 0 {
				continue
			}
			cp := coarsePop{Phases: append([]kinetics.ID(nil), p.Phases...)}
			for _, b := range bins {
				if b.Fraction == 0 {
					continue
				}
				share := b.Fraction / tot
				r0 := b.DiameterUM / 2 / e.g.VoxelUM
				g := coarseGrains{R0: r0, N: share * vol / (4 * math.Pi / 3 * r0 * r0 * r0), V: make([]float64, len(p.Phases))}
				for k, v := range p.Voxels {
					g.V[k] = share * v
				}
				cp.Bins = append(cp.Bins, g)
			}
			for k, id := range p.Phases {
				cs.Initial[id] += p.Voxels[k]
			}
			cs.Volume += vol
			cs.Pops = append(cs.Pops, cp)
		}
	}
	rxs := kinetics.Reactions()
	cs.Acc = make([][]float64, len(rxs))
	for i, r := range rxs {
		cs.Acc[i] = make([]float64, len(r.Products))
	}
	e.s.Coarse = cs
	e.cc = coarseCache{}
	e.setCementMass()
	return nil
}

// coarseMassG returns the carried grains' initial mass, g.
func (e *Engine) coarseMassG() float64 {
	m := 0.0
	for id, v := range e.s.Coarse.Initial {
		if v > 0 {
			m += v * kinetics.Lookup(kinetics.ID(id)).DensityGPerCM3 * e.voxCM3
		}
	}
	return m
}

// CarriedFraction returns the mass fraction of the cement carried as
// coarse grains outside the lattice.
func (e *Engine) CarriedFraction() float64 {
	if e.cementG == 0 {
		return 0
	}
	return e.coarseMassG() / e.cementG
}

// CarriedAlpha returns the degree of hydration of the carried clinker
// (mass-weighted), NaN when nothing is carried.
func (e *Engine) CarriedAlpha() float64 {
	var num, den float64
	for id, v := range e.s.Coarse.Initial {
		if ph := kinetics.Lookup(kinetics.ID(id)); v > 0 && ph.Role == kinetics.RoleClinker {
			num += e.s.Coarse.Reacted[id] * ph.DensityGPerCM3
			den += v * ph.DensityGPerCM3
		}
	}
	if den == 0 {
		return math.NaN()
	}
	return num / den
}

// CarriedVoid returns the water-filled virtual pore volume in the carried
// grains' outlines (what dissolved without solid product), voxels.
func (e *Engine) CarriedVoid() float64 { return e.s.Coarse.Void }

// CarriedVoxels returns the virtual volume Vc of the carried grains'
// outlines, in voxels.
func (e *Engine) CarriedVoxels() float64 { return e.s.Coarse.Volume }

// PasteVoxels returns the paste volume the box stands for, in voxels: the
// lattice plus the carried grains' outlines.
func (e *Engine) PasteVoxels() float64 { return float64(e.g.Len()) + e.s.Coarse.Volume }

// PasteCount returns the volume of phase id in the paste, in voxels: the
// lattice's voxels, the dissolved units of a product, no; plus the carried
// grains' remaining solid of the phase, their inner product of it, and for
// water their water-filled virtual pores.
func (e *Engine) PasteCount(id kinetics.ID) float64 {
	c := &e.s.Coarse
	v := float64(e.s.Count[id]) + c.Inner[id] + c.Initial[id] - c.Reacted[id]
	if id == kinetics.Water {
		v += c.Void
	}
	return v
}

// waterPorosity returns the water-filled porosity of the paste, φ_w of
// the water and space law: lattice water and the carried outlines'
// virtual water over the paste volume.
func (e *Engine) waterPorosity() float64 {
	c := &e.s.Coarse
	return (float64(e.s.Count[kinetics.Water]) + c.Void) / (float64(e.g.Len()) + c.Volume)
}

// coverage returns θ of dissolving phase d: the fraction of its exposed
// lattice faces covered by product; with no exposed face of the phase,
// that of all dissolving phases, and 1 when none is exposed.
func (e *Engine) coverage(d int) float64 {
	if w, h := e.sumW[d], e.sumH[d]; w+h > 0 {
		return float64(h) / float64(w+h)
	}
	var w, h int
	for k := range e.dph {
		w += e.sumW[k]
		h += e.sumH[k]
	}
	if w+h > 0 {
		return float64(h) / float64(w+h)
	}
	return 1
}

// grainsArea returns the area of the N grains of b in voxel faces, κ 4π r² N,
// and their remaining solid, voxels.
func (e *Engine) grainsArea(b *coarseGrains) (area, vol float64) {
	for _, v := range b.V {
		vol += v
	}
	if vol <= 0 || b.N <= 0 {
		return 0, 0
	}
	r := math.Cbrt(3 * vol / (4 * math.Pi * b.N))
	return e.kappa * 4 * math.Pi * r * r * b.N, vol
}

// through returns f(δ) of grains b of remaining solid vol.
func (e *Engine) through(b *coarseGrains, vol float64) float64 {
	if e.delta0 <= 0 {
		return 1
	}
	r := math.Cbrt(3 * vol / (4 * math.Pi * b.N))
	depth := (b.R0 - r) * e.g.VoxelUM
	return 1 / (1 + math.Max(0, depth)/e.delta0)
}

// refreshCoarse rebuilds the sums S1, S2 of the cache.
func (e *Engine) refreshCoarse() {
	cc := &e.cc
	for d := range e.dph {
		cc.s1[d], cc.s2[d] = 0, 0
	}
	for pi := range e.s.Coarse.Pops {
		p := &e.s.Coarse.Pops[pi]
		for bi := range p.Bins {
			b := &p.Bins[bi]
			a, vol := e.grainsArea(b)
			if a == 0 {
				continue
			}
			f := e.through(b, vol)
			for k, id := range p.Phases {
				d := e.dOf[id]
				if d < 0 || b.V[k] <= 0 {
					continue
				}
				as := a * b.V[k] / vol
				cc.s1[d] += as
				cc.s2[d] += as * f
			}
		}
	}
	cc.valid = true
	cc.delta0 = e.delta0
}

// coarseRates fills the carried events' rates from index k0 of e.rates and
// returns their sum; computeRates has set cc.mul.
func (e *Engine) coarseRates(k0 int) float64 {
	if len(e.s.Coarse.Pops) == 0 {
		return 0
	}
	if !e.cc.valid || e.cc.delta0 != e.delta0 {
		e.refreshCoarse()
	}
	var total float64
	for d := range e.dph {
		r := 0.0
		if s1 := e.cc.s1[d]; s1 > 0 {
			th := e.coverage(d)
			r = e.cc.mul[d] * ((1-th)*s1 + th*e.beta[d]*e.cc.s2[d])
		}
		e.rates[k0+d] = r
		total += r
	}
	return total
}

// coarseSulfateFaces returns the exposed faces of carried sulfate phase d
// for the sulfate availability σ: bare faces and, weighted by β, covered
// ones, as for the lattice.
func (e *Engine) coarseSulfateFaces(d int) float64 {
	if len(e.s.Coarse.Pops) == 0 {
		return 0
	}
	if !e.cc.valid || e.cc.delta0 != e.delta0 {
		e.refreshCoarse()
	}
	s1 := e.cc.s1[d]
	if s1 == 0 {
		return 0
	}
	th := e.coverage(d)
	return (1 - th + th*e.beta[d]) * s1
}

// fireCoarse runs one carried event of dissolving phase d: it chooses
// grains in proportion to their rate and reacts one voxel's worth of the
// phase (or what is left of it).
func (e *Engine) fireCoarse(d int) {
	id := e.dph[d]
	th := e.coverage(d)
	var tot float64
	type pick struct {
		b *coarseGrains
		k int
		w float64
	}
	var picks []pick
	for pi := range e.s.Coarse.Pops {
		p := &e.s.Coarse.Pops[pi]
		k := -1
		for j, q := range p.Phases {
			if q == id {
				k = j
			}
		}
		if k < 0 {
			continue
		}
		for bi := range p.Bins {
			b := &p.Bins[bi]
			if b.V[k] <= 0 {
				continue
			}
			a, vol := e.grainsArea(b)
			w := a * b.V[k] / vol * ((1 - th) + th*e.beta[d]*e.through(b, vol))
			if w > 0 {
				picks = append(picks, pick{b, k, w})
				tot += w
			}
		}
	}
	if tot <= 0 {
		return
	}
	u := e.r.Float64() * tot
	sel := picks[len(picks)-1]
	for _, pk := range picks {
		if u < pk.w {
			sel = pk
			break
		}
		u -= pk.w
	}
	amt := math.Min(1, sel.b.V[sel.k])
	sel.b.V[sel.k] -= amt
	if sel.b.V[sel.k] < 1e-9 {
		sel.b.V[sel.k] = 0
	}
	e.cc.valid = false
	e.s.Coarse.Reacted[id] += amt
	e.coarseReaction(id, d, amt)
}

// coarseReaction runs the reaction of amt voxels of carried phase id, as
// dissolve does for a lattice voxel.
func (e *Engine) coarseReaction(id kinetics.ID, d int, amt float64) {
	switch {
	case e.seq[id] != nil:
		if rx := e.sequenceReaction(id, amt*e.voxCM3/kinetics.Lookup(id).MolarVolumeCM3()); rx >= 0 {
			e.coarseReact(id, rx, amt)
		}
	case id == kinetics.Hemihydrate:
		e.coarseReact(id, e.rxIndex[kinetics.RxHemihydrate], amt)
	case id == kinetics.Anhydrite:
		e.coarseReact(id, e.rxIndex[kinetics.RxAnhydrite], amt)
	case kinetics.Lookup(id).Role == kinetics.RoleSulfate:
		e.s.PoolSO4Mol += amt * e.voxCM3 / kinetics.Lookup(id).MolarVolumeCM3()
		e.s.Coarse.Void += amt
	default:
		if rx := e.rxOfD[d]; rx >= 0 {
			e.coarseReact(id, rx, amt)
		} else {
			e.s.Coarse.Void += amt
		}
	}
}

// coarseReact books reaction rx of amt voxels of carried phase id: heat,
// water, shrinkage; one voxel of product per voxel reacted stays in the
// outline, the rest leaves as dissolved units from random pore-water
// voxels of the lattice.
func (e *Engine) coarseReact(id kinetics.ID, rx int, amt float64) {
	r := &kinetics.Reactions()[rx]
	ph := kinetics.Lookup(id)
	molVox := amt * e.voxCM3 / ph.MolarVolumeCM3()
	e.s.HeatJ += r.HeatJPerG * ph.DensityGPerCM3 * e.voxCM3 * amt
	e.s.WaterMol += r.WaterMol * molVox / r.PrimaryMol
	shrink := r.ChemicalShrinkage() * amt
	e.s.ShrinkVox += shrink
	solid := 0.0
	for _, t := range r.Products {
		if t.Phase != kinetics.Gypsum {
			solid += r.VoxelsPerVoxel(t.Phase)
		}
	}
	keep := 0.0 // share of the products kept in the outline
	if solid > 0 {
		keep = math.Min(1, 1/solid)
	}
	e.s.Coarse.Void += amt * math.Max(0, 1-solid)
	c := &e.s.Coarse
	n := e.g.Len()
	for t, term := range r.Products {
		if term.Phase == kinetics.Gypsum {
			e.s.PoolSO4Mol += term.Mol * molVox / r.PrimaryMol
			continue
		}
		x := r.VoxelsPerVoxel(term.Phase) * amt
		in := term.Phase
		if in == kinetics.CSHOuter {
			in = kinetics.CSHInner
		}
		c.Inner[in] += x * keep
		c.Acc[rx][t] += x * (1 - keep)
		k := int(c.Acc[rx][t])
		c.Acc[rx][t] -= float64(k)
		for ; k > 0; k-- {
			pos, ok := e.walk(int32(e.r.IntN(n)), e.rules[term.Phase], term.Phase, e.spawnSteps)
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

// CarriedInner returns the carried grains' inner product of phase id, in
// voxels (virtual: inside their outlines).
func (e *Engine) CarriedInner(id kinetics.ID) float64 { return e.s.Coarse.Inner[id] }

// CarriedPopulations groups carried volumes (voxels, by phase id) into
// populations as Populations does for packed grains: the clinker phases
// share polymineral grains unless grains is Monomineral; sulfates and
// fillers are grains of their own.
func CarriedPopulations(voxels [kinetics.NumIDs]float64, grains ClinkerGrains) []CarriedPopulation {
	var pops []CarriedPopulation
	for _, g := range grainGroups(&voxels, func(id int) bool { return voxels[id] > 0 }, grains) {
		pops = append(pops, CarriedPopulation{Phases: g.phases, Voxels: g.amounts})
	}
	return pops
}
