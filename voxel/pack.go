package voxel

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"

	"gelspace/kinetics"
)

// Population is one kind of particle: single-phase grains (one entry in
// Phases) or multi-phase clinker grains whose voxels are shared among the
// listed phases. Voxels[i] is the target voxel count of Phases[i].
type Population struct {
	Phases []kinetics.ID
	Voxels []int
	// Classes, when set, are the population's own particle sizes (an SCM
	// with its own PSD); nil uses PackSpec.Classes.
	Classes *Classes
}

// Total returns the population's target voxels.
func (p Population) Total() int {
	t := 0
	for _, v := range p.Voxels {
		t += v
	}
	return t
}

// Populations splits the solid of a fresh paste into particle populations
// for a box of nVoxels voxels. pasteVol is indexed by phase id (volume
// fractions of the paste; water and other non-anhydrous entries are
// ignored). Clinker phases share polymineral grains unless grains is
// Monomineral; sulfates and fillers are always grains of their own. Voxel counts are rounded by largest remainder so that each phase is
// within one voxel of its exact share and the total solid is round(φ·N).
func Populations(pasteVol [kinetics.NumIDs]float64, nVoxels int, grains ClinkerGrains) []Population {
	var want [kinetics.NumIDs]float64
	var cnt [kinetics.NumIDs]int
	sum := 0.0
	for id, f := range pasteVol {
		if !kinetics.IsAnhydrous(kinetics.ID(id)) || f <= 0 {
			continue
		}
		want[id] = f * float64(nVoxels)
		cnt[id] = int(math.Floor(want[id]))
		sum += want[id]
	}
	total := int(math.Round(sum))
	have := 0
	for _, c := range cnt {
		have += c
	}
	for have < total {
		best, bestR := -1, -1.0
		for id := range want {
			if r := want[id] - float64(cnt[id]); want[id] > 0 && r > bestR {
				best, bestR = id, r
			}
		}
		cnt[best]++
		have++
	}
	var pops []Population
	for _, g := range grainGroups(&cnt, func(id int) bool { return want[id] > 0 }, grains) {
		pops = append(pops, Population{Phases: g.phases, Voxels: g.amounts})
	}
	return pops
}

// grainGroup is one population of grainGroups: its phases and the amount
// of each.
type grainGroup[T int | float64] struct {
	phases  []kinetics.ID
	amounts []T
}

// grainGroups sorts the anhydrous phases that use admits into grain
// populations, in id order: the clinker phases share one polymineral
// population, first, unless grains is Monomineral; every other phase
// (sulfates, fillers, each clinker phase when monomineral) is a
// population of its own.
func grainGroups[T int | float64](amt *[kinetics.NumIDs]T, use func(id int) bool, grains ClinkerGrains) []grainGroup[T] {
	var out []grainGroup[T]
	var clinker grainGroup[T]
	for id := range amt {
		if !kinetics.IsAnhydrous(kinetics.ID(id)) || !use(id) {
			continue
		}
		p := kinetics.Lookup(kinetics.ID(id))
		if p.Role == kinetics.RoleClinker && grains == Polymineral {
			clinker.phases = append(clinker.phases, p.ID)
			clinker.amounts = append(clinker.amounts, amt[id])
			continue
		}
		out = append(out, grainGroup[T]{phases: []kinetics.ID{p.ID}, amounts: []T{amt[id]}})
	}
	if len(clinker.phases) > 0 {
		out = append([]grainGroup[T]{clinker}, out...)
	}
	return out
}

// ClinkerGrains is the mineralogy of the clinker grains of a pack.
type ClinkerGrains uint8

const (
	// Polymineral grains share C3S, C2S, C3A and C4AF in phase domains
	// (the zero value).
	Polymineral ClinkerGrains = iota
	// Monomineral grains are each a single clinker phase.
	Monomineral
)

// PackSpec describes a box to pack. The zero values of SpacingVoxels,
// DomainUM and Seed are usable defaults (touching allowed, 3 µm
// domains, seed 0).
type PackSpec struct {
	NX, NY, NZ int
	VoxelUM    float64
	Classes    *Classes // particle sizes, from PSD.Classes
	Pops       []Population

	// SpacingVoxels is the least number of water voxels kept between the
	// surfaces of two particles (dispersed paste); 0 lets them touch
	// (flocculated).
	SpacingVoxels int

	// DomainUM is the size of the phase domains inside polymineral
	// clinker grains: the cell edge of the value-noise field that orders
	// voxels before the quantile thresholds. 0 means DefaultDomainUM.
	DomainUM float64

	Seed uint64
}

// DefaultDomainUM is the phase-domain size used when
// PackSpec.DomainUM is 0: a few µm, the order of the clinker crystals
// in a ground cement grain (an assumption of gelspace, not a measured
// value).
const DefaultDomainUM = 3.0

// MaxSpacingVoxels bounds PackSpec.SpacingVoxels.
const MaxSpacingVoxels = 5

// PackResult is a packed box and what it took.
type PackResult struct {
	Grid *Grid
	// Diameter and Pop give each particle's class diameter in voxels and
	// its population index, indexed by particle id (index 0 unused).
	Diameter []uint16
	Pop      []uint8
	// Counts[p][d] is the number of particles of population p in class d.
	Counts   [][]int
	Attempts int64 // random placement trials
	Scans    int   // placements that needed a scan of the box
}

// PackError is a target that cannot be reached; its message says what to
// change.
type PackError struct{ Msg string }

func (e *PackError) Error() string { return e.Msg }

// Pack builds the box: digitised spheres (see sphereMask) placed at random,
// largest first, in the periodic box, each population's particle counts
// from Classes.Counts so that every phase reaches exactly its target voxel
// count. A particle goes where all voxels of the sphere of diameter
// d + 2·SpacingVoxels around the same anchor are water; after 256 random
// trials the box is scanned from a random voxel for the first place that
// fits. Particle ids are 1, 2, … in placement order. Multi-phase clinker
// grains then get their phases from two periodic value-noise fields:
// the first field's quantile splits silicates (C3S, C2S) from the
// interstitial phases, the second splits within each group; ranks are by
// (field value bin, scan order), so counts are exact. Random numbers come
// from PCG seeded with Seed only.
func Pack(spec PackSpec) (*PackResult, error) {
	if spec.Classes == nil {
		panic("voxel: Pack: nil Classes")
	}
	if spec.SpacingVoxels < 0 || spec.SpacingVoxels > MaxSpacingVoxels {
		return nil, fmt.Errorf("spacing %d voxels: must be between 0 and %d", spec.SpacingVoxels, MaxSpacingVoxels)
	}
	if len(spec.Pops) > 255 {
		panic("voxel: Pack: more than 255 populations")
	}
	g, err := NewGrid(spec.NX, spec.NY, spec.NZ, spec.VoxelUM)
	if err != nil {
		return nil, err
	}
	minEdge := min(spec.NX, spec.NY, spec.NZ)
	cls := spec.Classes
	res := &PackResult{Grid: g, Diameter: []uint16{0}, Pop: []uint8{0}}
	total := 0
	maxD := cls.MaxDiameter
	for _, p := range spec.Pops {
		if p.Classes != nil {
			maxD = max(maxD, p.Classes.MaxDiameter)
		}
	}
	for _, p := range spec.Pops {
		if len(p.Phases) != len(p.Voxels) || len(p.Phases) == 0 {
			panic("voxel: Pack: population phases and voxels differ in length")
		}
		pc := cls
		if p.Classes != nil {
			pc = p.Classes
		}
		c := pc.Counts(p.Total())
		c = append(c, make([]int, maxD+1-len(c))...) // every population indexed up to maxD
		res.Counts = append(res.Counts, c)
		total += p.Total()
	}
	if total > g.Len() {
		return nil, &PackError{fmt.Sprintf("solid target %d voxels exceeds the box's %d: raise mix.w_c", total, g.Len())}
	}
	for d := maxD; d >= 1; d-- {
		for _, c := range res.Counts {
			if c[d] > 0 && d > minEdge/2 {
				return nil, &PackError{fmt.Sprintf("particles of %d voxels (%.3g µm) do not fit a box of %d voxels per edge: enlarge box.voxels to at least %d", d, float64(d)*spec.VoxelUM, minEdge, 2*d)}
			}
		}
	}
	nPart := 1
	for _, c := range res.Counts {
		for _, k := range c {
			nPart += k
		}
	}
	res.Diameter = append(make([]uint16, 0, nPart), 0)
	res.Pop = append(make([]uint8, 0, nPart), 0)
	rng := rand.New(rand.NewPCG(spec.Seed, 0x67656c7370616365)) // stream "gelspace"
	pk := packer{g: g, rng: rng}
	var order []uint8
	placed := 0
	for d := maxD; d >= 1; d-- {
		order = order[:0]
		for pi, c := range res.Counts {
			for k := 0; k < c[d]; k++ {
				order = append(order, uint8(pi))
			}
		}
		if len(order) == 0 {
			continue
		}
		rng.Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
		m := sphereMask(d)
		chk := m
		if spec.SpacingVoxels > 0 {
			chk = sphereMask(d + 2*spec.SpacingVoxels)
		}
		for _, pi := range order {
			i, ok := pk.place(chk)
			if !ok {
				return nil, &PackError{fmt.Sprintf("cannot place a particle of %d voxels (%.3g µm) after %.1f %% of the solid was placed (box %.1f %% solid): the paste is too dense for random packing; raise mix.w_c, lower pack.grain_spacing_um, or use a coarser voxel or larger box",
					d, float64(d)*spec.VoxelUM, 100*float64(placed)/float64(total), 100*float64(placed)/float64(g.Len()))}
			}
			id := int32(len(res.Diameter))
			pk.fill(m, i, id, spec.Pops[pi].Phases[0])
			res.Diameter = append(res.Diameter, uint16(d))
			res.Pop = append(res.Pop, pi)
			placed += m.volume
		}
	}
	res.Attempts, res.Scans = pk.attempts, pk.scans
	corr := spec.DomainUM
	if corr == 0 {
		corr = DefaultDomainUM
	}
	if !(corr > 0) {
		return nil, fmt.Errorf("phase-domain size %g µm: must be > 0", corr)
	}
	for pi, p := range spec.Pops {
		if len(p.Phases) > 1 {
			assignPhases(g, res.Pop, uint8(pi), p, spec.Seed, corr/spec.VoxelUM)
		}
	}
	return res, nil
}

// packer holds the placement state.
type packer struct {
	g        *Grid
	rng      *rand.Rand
	attempts int64
	scans    int
}

// randomTrials is the number of random anchors tried before a scan.
const randomTrials = 256

// place finds an anchor where every voxel of m is water, and returns its
// offset.
func (pk *packer) place(m *mask) (int, bool) {
	g := pk.g
	n := g.Len()
	for t := 0; t < randomTrials; t++ {
		pk.attempts++
		i := pk.rng.IntN(n)
		if g.Particle[i] == 0 && pk.free(m, i) {
			return i, true
		}
	}
	pk.scans++
	start := pk.rng.IntN(n)
	for k := 0; k < n; k++ {
		i := start + k
		if i >= n {
			i -= n
		}
		if g.Particle[i] == 0 && pk.free(m, i) {
			return i, true
		}
	}
	return 0, false
}

// free reports whether every voxel of m anchored at offset i is water.
func (pk *packer) free(m *mask, i int) bool {
	g := pk.g
	nx, ny, nz := g.NX, g.NY, g.NZ
	cx, cy, cz := g.Coords(i)
	part := g.Particle
	for _, s := range m.spans {
		row := nx * (mod(cy+int(s.dy), ny) + ny*mod(cz+int(s.dz), nz))
		x0, x1 := cx+int(s.x0), cx+int(s.x1)
		if x0 >= 0 && x1 < nx {
			for _, p := range part[row+x0 : row+x1+1] {
				if p != 0 {
					return false
				}
			}
			continue
		}
		for x := x0; x <= x1; x++ {
			if part[row+mod(x, nx)] != 0 {
				return false
			}
		}
	}
	return true
}

// fill writes particle id and phase ph into the voxels of m anchored at i.
func (pk *packer) fill(m *mask, i int, id int32, ph kinetics.ID) {
	g := pk.g
	nx, ny, nz := g.NX, g.NY, g.NZ
	cx, cy, cz := g.Coords(i)
	for _, s := range m.spans {
		row := nx * (mod(cy+int(s.dy), ny) + ny*mod(cz+int(s.dz), nz))
		for x := cx + int(s.x0); x <= cx+int(s.x1); x++ {
			j := row + mod(x, nx)
			g.Particle[j] = id
			g.Phase[j] = ph
		}
	}
}

// ranker turns a (bin, scan order) key into a rank among the voxels of a
// histogram: below[b] voxels lie in lower bins; seen[b] counts those of bin
// b met so far.
type ranker struct {
	hist, below, seen []int32
}

func newRanker() *ranker {
	return &ranker{hist: make([]int32, noiseBins), below: make([]int32, noiseBins), seen: make([]int32, noiseBins)}
}

func (r *ranker) finish() {
	s := int32(0)
	for b, h := range r.hist {
		r.below[b] = s
		s += h
	}
	clear(r.seen)
}

func (r *ranker) rank(b int) int32 {
	k := r.below[b] + r.seen[b]
	r.seen[b]++
	return k
}

// band returns the index of the first cumulative target above rank k.
func band(cum []int32, k int32) int {
	for i, c := range cum {
		if k < c {
			return i
		}
	}
	return len(cum) - 1
}

// assignPhases shares the voxels of population pi's grains among its
// phases with exact counts (see Pack). cellVoxels is the noise cell edge.
func assignPhases(g *Grid, popOf []uint8, pi uint8, p Population, seed uint64, cellVoxels float64) {
	dims := [3]int{g.NX, g.NY, g.NZ}
	fa := newNoise(seed^0x5a5a5a5a5a5a5a5a, dims, cellVoxels)
	fb := newNoise(seed^0x3c3c3c3c3c3c3c3c, dims, cellVoxels)
	// Group 0: silicates; group 1: the rest (interstitial).
	var groups [2][]int // indices into p.Phases
	for k, id := range p.Phases {
		if id == kinetics.C3S || id == kinetics.C2S {
			groups[0] = append(groups[0], k)
		} else {
			groups[1] = append(groups[1], k)
		}
	}
	var gcum []int32 // cumulative group targets
	gIndex := []int{}
	acc := int32(0)
	for gi := range groups {
		if len(groups[gi]) == 0 {
			continue
		}
		for _, k := range groups[gi] {
			acc += int32(p.Voxels[k])
		}
		gcum = append(gcum, acc)
		gIndex = append(gIndex, gi)
	}
	pcum := make([][]int32, 2)
	for gi := range groups {
		acc := int32(0)
		for _, k := range groups[gi] {
			acc += int32(p.Voxels[k])
			pcum[gi] = append(pcum[gi], acc)
		}
	}
	ra := newRanker()
	rb := [2]*ranker{newRanker(), newRanker()}
	rowA := make([]float64, g.NX)
	rowB := make([]float64, g.NX)
	member := func(i int) bool {
		id := g.Particle[i]
		return id != 0 && popOf[id] == pi
	}
	groupOf := func(v float64) int { return gIndex[band(gcum, ra.rank(bin(v)))] }
	// Pass 1: histogram of field A.
	for z := 0; z < g.NZ; z++ {
		for y := 0; y < g.NY; y++ {
			base := g.Index(0, y, z)
			fa.row(y, z, rowA)
			for x, v := range rowA {
				if member(base + x) {
					ra.hist[bin(v)]++
				}
			}
		}
	}
	ra.finish()
	// Pass 2: groups from A, histograms of B per group.
	for z := 0; z < g.NZ; z++ {
		for y := 0; y < g.NY; y++ {
			base := g.Index(0, y, z)
			fa.row(y, z, rowA)
			fb.row(y, z, rowB)
			for x := range rowA {
				if member(base + x) {
					rb[groupOf(rowA[x])].hist[bin(rowB[x])]++
				}
			}
		}
	}
	clear(ra.seen)
	rb[0].finish()
	rb[1].finish()
	// Pass 3: assign.
	for z := 0; z < g.NZ; z++ {
		for y := 0; y < g.NY; y++ {
			base := g.Index(0, y, z)
			fa.row(y, z, rowA)
			fb.row(y, z, rowB)
			for x := range rowA {
				i := base + x
				if !member(i) {
					continue
				}
				gi := groupOf(rowA[x])
				k := band(pcum[gi], rb[gi].rank(bin(rowB[x])))
				g.Phase[i] = p.Phases[groups[gi][k]]
			}
		}
	}
}

// SpecificSurfaceM2PerKg returns the specific surface of the anhydrous
// grains of g from their exposed voxel faces (faces between an anhydrous
// voxel and a pore voxel), per mass of anhydrous solid from the phase
// table's densities: 10⁹ · faces · a² / Σ (voxels · a³ · ρ) with a in µm,
// ρ in g/cm³, giving m²/kg.
func SpecificSurfaceM2PerKg(g *Grid) float64 {
	faces := 0
	var nb [6]int
	massVox := 0.0
	for i, ph := range g.Phase {
		if !kinetics.IsAnhydrous(ph) {
			continue
		}
		massVox += kinetics.Lookup(ph).DensityGPerCM3
		g.Neighbours(i, &nb)
		for _, j := range nb {
			if kinetics.IsPore(g.Phase[j]) {
				faces++
			}
		}
	}
	if massVox == 0 {
		return 0
	}
	return 1000 * float64(faces) / (massVox * g.VoxelUM)
}

// Describe returns a one-line account of the populations, for errors and
// logs: "clinker(c3s,c2s,c3a,c4af) 123 voxels; gypsum 45 voxels".
func Describe(pops []Population) string {
	var parts []string
	for _, p := range pops {
		var keys []string
		for _, id := range p.Phases {
			keys = append(keys, kinetics.Lookup(id).Key)
		}
		name := keys[0]
		if len(keys) > 1 {
			name = "clinker(" + strings.Join(keys, ",") + ")"
		}
		parts = append(parts, fmt.Sprintf("%s %d voxels", name, p.Total()))
	}
	return strings.Join(parts, "; ")
}
