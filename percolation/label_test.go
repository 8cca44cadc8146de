package percolation

import (
	"fmt"
	"math/rand/v2"
	"slices"
	"testing"

	"gelspace/kinetics"
)

// naiveLabel is the reference labelling: a breadth-first flood fill that
// walks every face neighbour (wrapping where periodic) and carries each
// voxel's unwrapped cell; a neighbour reached again in another cell shows a
// loop that winds around the box.
func naiveLabel(box Box, in []bool, bond func(a, b int) bool) *Clusters {
	n := box.Len()
	dim := box.dims()
	lab := make([]int32, n)
	for i := range lab {
		lab[i] = -1
	}
	cell := make([][3]int, n)
	c := &Clusters{Box: box, Label: lab}
	var queue []int
	for s := range n {
		if !in[s] || lab[s] >= 0 {
			continue
		}
		id := int32(len(c.Size))
		size := 0
		var lo, hi [3]bool
		var wrap [3]bool
		lab[s] = id
		cell[s] = [3]int{}
		queue = append(queue[:0], s)
		for len(queue) > 0 {
			i := queue[0]
			queue = queue[1:]
			size++
			x, y, z := box.Coords(i)
			p := [3]int{x, y, z}
			for a := range 3 {
				lo[a] = lo[a] || p[a] == 0
				hi[a] = hi[a] || p[a] == dim[a]-1
			}
			for a := range 3 {
				for _, step := range []int{-1, 1} {
					q := p
					q[a] += step
					w := cell[i]
					if q[a] < 0 || q[a] >= dim[a] {
						if !box.Periodic[a] {
							continue
						}
						if q[a] < 0 {
							q[a] += dim[a]
						} else {
							q[a] -= dim[a]
						}
						w[a] += step
					}
					j := box.Index(q[0], q[1], q[2])
					if !in[j] || (bond != nil && !bond(i, j)) {
						continue
					}
					if lab[j] < 0 {
						lab[j] = id
						cell[j] = w
						queue = append(queue, j)
						continue
					}
					for b := range 3 {
						if cell[j][b] != w[b] {
							wrap[b] = true
						}
					}
				}
			}
		}
		var sp [3]bool
		for a := range 3 {
			if box.Periodic[a] {
				sp[a] = wrap[a]
			} else {
				sp[a] = lo[a] && hi[a]
			}
		}
		c.Size = append(c.Size, size)
		c.Spans = append(c.Spans, sp)
	}
	return c
}

func sameClusters(t *testing.T, name string, got, want *Clusters) {
	t.Helper()
	if !slices.Equal(got.Label, want.Label) {
		t.Fatalf("%s: labels differ\n got %v\nwant %v", name, got.Label, want.Label)
	}
	if !slices.Equal(got.Size, want.Size) {
		t.Fatalf("%s: sizes differ: got %v, want %v", name, got.Size, want.Size)
	}
	if !slices.Equal(got.Spans, want.Spans) {
		t.Fatalf("%s: spans differ: got %v, want %v", name, got.Spans, want.Spans)
	}
}

func randomSet(rng *rand.Rand, n int, p float64) []bool {
	in := make([]bool, n)
	for i := range in {
		in[i] = rng.Float64() < p
	}
	return in
}

// TestLabelMatchesNaive checks the fast labelling against the flood fill,
// exactly, on random small grids with every combination of periodic axes,
// with and without a bond rule, reusing one Labeler throughout.
func TestLabelMatchesNaive(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var l Labeler
	for trial := range 1500 {
		box := Box{NX: 1 + rng.IntN(7), NY: 1 + rng.IntN(7), NZ: 1 + rng.IntN(7)}
		for a := range 3 {
			box.Periodic[a] = trial>>a&1 == 1
		}
		p := []float64{0.2, 0.31, 0.45, 0.6, 0.8, 1}[rng.IntN(6)]
		in := randomSet(rng, box.Len(), p)
		name := fmt.Sprintf("trial %d box %+v p %g", trial, box, p)
		sameClusters(t, name, l.Label(box, in), naiveLabel(box, in, nil))

		// A symmetric random bond rule: each unordered pair is open with
		// probability 0.7, decided by a hash of the pair.
		salt := rng.Uint64()
		bond := func(a, b int) bool {
			if a > b {
				a, b = b, a
			}
			h := (uint64(a)*0x9e3779b97f4a7c15 ^ uint64(b)*0xc2b2ae3d27d4eb4f ^ salt) * 0x165667b19e3779f9
			return h>>40%10 < 7
		}
		sameClusters(t, name+" bonded", l.LabelBonded(box, in, bond), naiveLabel(box, in, bond))
	}
}

// TestLabelSolidsMatchesNaive runs the solids bond rule on random phases
// and particles against the flood fill.
func TestLabelSolidsMatchesNaive(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	ids := []uint8{kinetics.Water, kinetics.Empty, kinetics.C3S, kinetics.C2S, kinetics.Gypsum, kinetics.CSHOuter, kinetics.CH}
	var l Labeler
	for trial := range 400 {
		box := Box{NX: 1 + rng.IntN(6), NY: 1 + rng.IntN(6), NZ: 1 + rng.IntN(6)}
		for a := range 3 {
			box.Periodic[a] = trial>>a&1 == 1
		}
		n := box.Len()
		phase := make([]uint8, n)
		particle := make([]int32, n)
		for i := range phase {
			phase[i] = ids[rng.IntN(len(ids))]
			if kinetics.IsAnhydrous(phase[i]) {
				particle[i] = int32(rng.IntN(3))
			}
		}
		in := make([]bool, n)
		for i, p := range phase {
			in[i] = kinetics.IsSolid(p)
		}
		bond := func(a, b int) bool {
			if kinetics.IsHydrate(phase[a]) || kinetics.IsHydrate(phase[b]) {
				return true
			}
			return particle[a] != 0 && particle[a] == particle[b]
		}
		got := l.SolidClusters(box, phase, particle)
		sameClusters(t, fmt.Sprintf("trial %d box %+v", trial, box), got, naiveLabel(box, in, bond))
	}
}

func TestLabelEdgeCases(t *testing.T) {
	// Empty set.
	box := Box{NX: 3, NY: 2, NZ: 2}
	c := Label(box, make([]bool, box.Len()))
	if c.Count() != 0 || c.Connectivity() != (Connectivity{}) {
		t.Errorf("empty set: %d clusters, %+v", c.Count(), c.Connectivity())
	}
	// A full periodic box wraps along every axis; a full open one spans.
	full := make([]bool, box.Len())
	for i := range full {
		full[i] = true
	}
	for _, b := range []Box{box, PeriodicBox(3, 2, 2)} {
		s := Label(b, full).Connectivity()
		want := Connectivity{Voxels: 12, Clusters: 1, Spanning: 12, Fraction: 1, Span: [3]bool{true, true, true}, SpanAxes: 3}
		if s != want {
			t.Errorf("full box %+v: got %+v, want %+v", b, s, want)
		}
	}
	// A cluster that crosses a periodic face without wrapping does not
	// span: two voxels at x = 0 and x = 3 of a periodic row of 4 touch
	// through the face, and form one cluster of 2 that touches both faces.
	b := PeriodicBox(4, 1, 1)
	in := []bool{true, false, false, true}
	c = Label(b, in)
	if c.Count() != 1 || c.Size[0] != 2 || c.Spans[0][0] {
		t.Errorf("periodic pair: got %d clusters sizes %v spans %v, want one of 2 not spanning", c.Count(), c.Size, c.Spans)
	}
	b.Periodic[0] = false
	c = Label(b, in)
	if c.Count() != 2 {
		t.Errorf("open pair: got %d clusters, want 2", c.Count())
	}
	// A diagonal staircase wraps along x and y of a periodic 3×3 plane
	// only through both periodic faces.
	b = Box{NX: 3, NY: 3, NZ: 1, Periodic: [3]bool{true, true, false}}
	stair := []bool{
		true, true, false,
		false, true, true,
		true, false, true,
	}
	c = Label(b, stair)
	// (A box one voxel thick along an open axis is spanned along it.)
	if c.Count() != 1 || c.Spans[0] != [3]bool{true, true, true} {
		t.Errorf("staircase: got %d clusters spans %v, want one wrapping x and y", c.Count(), c.Spans)
	}
	// Without the periodic y face the staircase still touches both y
	// faces, but no loop winds along x: it spans y only.
	b.Periodic = [3]bool{true, false, false}
	c = Label(b, stair)
	if c.Count() != 1 || c.Spans[0] != [3]bool{false, true, true} {
		t.Errorf("staircase, x periodic only: got %d clusters spans %v, want spans y, z", c.Count(), c.Spans)
	}
}

func TestLabelPanicsOnLength(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Error("Label with a short slice did not panic")
		}
	}()
	Label(Box{NX: 2, NY: 2, NZ: 2}, make([]bool, 7))
}

// TestSitePercolationThreshold checks the spanning probability of random
// site percolation on an open simple cubic lattice, L = 48, spanning along
// z (the face z = 0 joined to z = L−1), against the threshold
// p_c = 0.3116077 of Wang, Zhou, Zhang, Garoni & Deng, Phys. Rev. E 87
// (2013) 052107 (confirmed). At this size the window
// narrows to about ±0.02 around p_c, so the probability must cross one half
// between 0.29 and 0.33, be near 0 at 0.25 and near 1 at 0.40.
func TestSitePercolationThreshold(t *testing.T) {
	const L, seeds = 48, 40
	box := Box{NX: L, NY: L, NZ: L}
	var l Labeler
	in := make([]bool, box.Len())
	prob := func(p float64) float64 {
		hits := 0
		for s := range seeds {
			rng := rand.New(rand.NewPCG(uint64(s), uint64(p*1e6)))
			for i := range in {
				in[i] = rng.Float64() < p
			}
			if l.Label(box, in).Connectivity().Span[2] {
				hits++
			}
		}
		return float64(hits) / seeds
	}
	p25, p29, pc, p33, p40 := prob(0.25), prob(0.29), prob(0.3116077), prob(0.33), prob(0.40)
	t.Logf("spanning probability along z, L=%d, %d seeds: p=0.25 %.3f, 0.29 %.3f, p_c %.3f, 0.33 %.3f, 0.40 %.3f", L, seeds, p25, p29, pc, p33, p40)
	// At p_c itself the probability is neither near 0 nor near 1.
	if pc < 0.05 || pc > 0.95 {
		t.Errorf("p=p_c: spanning probability %.3f, want within 0.05–0.95", pc)
	}
	if p25 > 0.05 {
		t.Errorf("p=0.25: spanning probability %.3f, want ≤ 0.05", p25)
	}
	if p29 >= 0.5 {
		t.Errorf("p=0.29: spanning probability %.3f, want < 0.5", p29)
	}
	if p33 <= 0.5 {
		t.Errorf("p=0.33: spanning probability %.3f, want > 0.5", p33)
	}
	if p40 < 0.95 {
		t.Errorf("p=0.40: spanning probability %.3f, want ≥ 0.95", p40)
	}
}

// solidsCase builds an open box from strings, one per row along y: '.'
// water, 'A' and 'B' anhydrous C3S of particles 1 and 2, 'a' anhydrous of
// particle 0, 'H' C-S-H. The box has one more row of water along y and one
// more layer of water along z, so that only x can be spanned by the solids.
func solidsCase(rows ...string) (Box, []uint8, []int32) {
	box := Box{NX: len(rows[0]), NY: len(rows) + 1, NZ: 2}
	phase := make([]uint8, box.Len())
	particle := make([]int32, box.Len())
	for y, r := range rows {
		for x, ch := range r {
			i := box.Index(x, y, 0)
			switch ch {
			case '.':
				phase[i] = kinetics.Water
			case 'A':
				phase[i], particle[i] = kinetics.C3S, 1
			case 'B':
				phase[i], particle[i] = kinetics.C3S, 2
			case 'a':
				phase[i] = kinetics.C2S
			case 'H':
				phase[i] = kinetics.CSHOuter
			}
		}
	}
	return box, phase, particle
}

func TestSolidsBondRule(t *testing.T) {
	cases := []struct {
		rows     []string
		clusters int
		spanX    bool
	}{
		{[]string{"AABB"}, 2, false},                 // touching grains of different particles
		{[]string{"AAHBB"}, 1, true},                 // joined by one hydrate voxel
		{[]string{"AABB", ".HH."}, 1, true},          // joined by hydrate beside the contact
		{[]string{"AAAA"}, 1, true},                  // one grain
		{[]string{"aa"}, 2, false},                   // particle id 0 does not bond
		{[]string{"aHa"}, 1, true},                   // but hydrate joins it
		{[]string{"A.A"}, 2, false},                  // same particle, not touching
		{[]string{"AB", "BA"}, 4, false},             // checkerboard of two grains
		{[]string{"HHHH", "A..B"}, 1, true},          // hydrate bridge
		{[]string{"H..H"}, 2, false},                 // hydrates apart
		{[]string{"A", "H", "B", "B"}, 1, false},     // spans y, not x... x has length 1
		{[]string{"AAAB", "HHH.", "BBBB"}, 2, false}, // upper B isolated: A+H+lower B span x? see below
	}
	// The last row: A(0..2,0) with H below them bonds to the lower B row;
	// the B at (3,0) touches A and nothing hydrated, so it stays alone. The
	// cluster A+H+B(lower) touches x = 0 and x = 3, so it spans x.
	cases[len(cases)-1].spanX = true
	// A column of length 1 in x touches both x faces: it spans x.
	cases[len(cases)-2].spanX = true
	for _, c := range cases {
		box, phase, particle := solidsCase(c.rows...)
		s := Solids(box, phase, particle)
		if s.Clusters != c.clusters || s.Span[0] != c.spanX {
			t.Errorf("%q: got %d clusters, span x %v; want %d, %v", c.rows, s.Clusters, s.Span[0], c.clusters, c.spanX)
		}
	}
	// Connected fraction: A A H B B spans x with all 5 solid voxels; A A B B
	// has no spanning cluster.
	box, phase, particle := solidsCase("AAHBB")
	if s := Solids(box, phase, particle); s.Fraction != 1 || s.Voxels != 5 {
		t.Errorf("AAHBB: fraction %g of %d voxels, want 1 of 5", s.Fraction, s.Voxels)
	}
	box, phase, particle = solidsCase("AABB", "....")
	if s := Solids(box, phase, particle); s.Fraction != 0 || s.SpanAxes != 0 {
		t.Errorf("AABB: fraction %g, %d axes, want 0, 0", s.Fraction, s.SpanAxes)
	}
	// nil particle: no anhydrous bonds at all.
	box, phase, _ = solidsCase("AAAA")
	if s := Solids(box, phase, nil); s.Clusters != 4 {
		t.Errorf("AAAA with nil particle: %d clusters, want 4", s.Clusters)
	}
}

func TestPores(t *testing.T) {
	const (
		w = kinetics.Water
		e = kinetics.Empty // empty pores count as pore space
		s = kinetics.C3S
	)
	box := Box{NX: 4, NY: 3, NZ: 1}
	phase := []uint8{
		s, w, w, s,
		s, s, w, s,
		s, w, w, e,
	}
	got := Pores(box, phase)
	// Pore voxels (1,0) (2,0) (2,1) (1,2) (2,2) (3,2): one cluster of 6
	// touching y = 0 and y = 2, x = 1..3 but not x = 0, and both z faces
	// of a box one voxel thick.
	want := Connectivity{Voxels: 6, Clusters: 1, Spanning: 6, Fraction: 1, Span: [3]bool{false, true, true}, SpanAxes: 2}
	if got != want {
		t.Errorf("got %+v, want %+v", got, want)
	}
}
