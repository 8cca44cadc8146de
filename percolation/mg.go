package percolation

import "sync"

// The preconditioner of the diffusivity solve is one V-cycle of
// aggregation multigrid.
//
// Level 0 is the voxel network on the active set. Level 1 groups its voxels
// into aggregates: the connected components, by strong bonds, of each
// 2×2×2 block (1 wide at an odd end), a bond being strong when its
// conductance is at least mgStrongFine of the largest bond of either voxel.
// A block cut in two by insulating voxels thus gives two aggregates, and so
// does a block where pore voxels meet only through C-S-H: no aggregate ties
// together voxels that are joined only through far-away or weak paths
// (about 7 % of the occupied blocks of a 28-day 100³ paste are cut by
// insulators; merging them, as plain geometric aggregation does, cost 1.6
// times the iterations, and ignoring strength 1.5 times). Each further
// level groups the aggregates of the level below in the same way, by the
// 2×2×2 blocks of their block grid and entries of at least mgStrongCoarse
// of either row's largest; a node with no strong entry is left out of the
// next level, its value being set by its neighbours in the smoothing.
// With piecewise-constant
// interpolation P the Galerkin operator Pᵀ A P is again a conductance
// network on the aggregates, stored as compressed sparse rows: the bond
// between two aggregates is the sum of the finer conductances between them,
// and the diagonal is the sum of the finer diagonals less twice the bonds
// inside the aggregate.
//
// The fine level smooths with red–black Gauss–Seidel, the colour of a voxel
// being the parity of x + y + z: before the coarse correction it updates
// the red voxels (from z = 0; this first half sweep is folded into the
// residual update of conjugate gradients) and then the black ones, after
// it the black and then the red ones, so that the sequence of half sweeps
// is a palindrome. After the black half sweep the residual vanishes on
// black, so only the red residual is formed and restricted, and only red
// voxels take the prolongated correction (the black ones are overwritten
// next). The fine passes walk the rows of the full box with stride 2 and
// look each bond's conductance up from the classes of its voxels (see
// Solver.gather). On an odd periodic edge two voxels of one colour meet
// across the face; the half sweeps then run on one worker over the whole
// level, in raster order before the coarse correction and in reverse
// raster order (the adjoint) after it, and every residual is formed. The
// coarse levels smooth with mgSweeps forward Gauss–Seidel sweeps (mgSweeps1
// on the first) before and as many backward sweeps after the correction
// below, and the coarsest
// level (at most mgCoarsestLen aggregates, or no further grouping
// possible) with mgCoarseSweeps symmetric sweeps from 0. The coarse sweeps,
// restrictions and prolongations of the larger levels run by slabs of z
// planes on the solver's workers, in an order that does not depend on
// their number (see setSlabs). The second coarse
// level is solved by two V-cycles joined by a polynomial step (see
// Solver.cycle), which damps the smooth errors that one cycle of plain
// aggregation leaves and so cuts the iterations by about 40 %. Every fine
// smoothing step multiplies by the same single-precision inverse diagonal
// and every coarse one by the same single-precision one (the coarse
// vectors are single precision too, each row summed in double precision),
// so the cycle is a
// symmetric positive definite operator to the rounding of the
// single-precision vectors, as conjugate gradients need (TestMGSymmetric).
// Boxes of at most mgCoarsestLen voxels use the Jacobi diagonal alone.

// Multigrid parameters: red–black Gauss–Seidel pairs before and after the
// coarse correction on the fine level (more than one pair cost more time
// than it saved in iterations), Gauss–Seidel sweeps before and after
// it on the first coarse level and on the coarser ones (two on the first
// saved one iteration in 40 for 1.3 times its work), symmetric sweeps on the coarsest level, and the
// size of the coarsest level.
const (
	mgFineSweeps   = 1
	mgSweeps1      = 1 // on the first coarse level, the largest
	mgSweeps       = 2
	mgCoarseSweeps = 8
	mgCoarsestLen  = 512
)

// The two-step cycle (see Solver.cycle): the coarse level that takes it
// (index into Solver.mg; 1 is the second coarse level) and its weight ω.
// On the 28-day 100³ paste of testdata (tol 1e-5, one core) it cut the
// conjugate-gradient iterations from 43 to 26 per axis and the time from
// 5.8 to 3.8 s; on the first coarse level instead it saved as many
// iterations for more work (25 iterations, 5.1 s), on the third fewer
// (27, 4.2 s); ω = 3 and 5 took as many iterations as 4 or one more. Only
// one level takes it: the step's correction exceeds the exact one by up
// to (1 + ω)²/(4ω) = 1.56 times, which the V-cycle above absorbs (its
// coarse correction stays below twice the exact one for ω < 5.8) but a
// second two-step level above would not.
const (
	mgTwoStepLevel = 1
	mgTwoStepOmega = 4
)

// Strength of connection: a bond is strong when its conductance is at
// least this share of the largest bond of either of its ends (fine level:
// voxels; coarse levels: aggregates). Aggregates hold only strongly bonded
// nodes, so that the coarse levels can represent pore regions joined to
// each other only through C-S-H (1/400 of the pores' diffusivity) with a
// value each; with aggregates that ignored strength, a conjugate-gradient
// iteration took 1.5 times as many steps on a 28-day paste.
const (
	mgStrongFine   = 0.25
	mgStrongCoarse = 0.05
)

// gLevel is a coarse level: a conductance network on the aggregates of the
// level below, stored as compressed rows of its off-diagonal conductances.
//
// Only n, ptr, col, val, invd, f, x and agg are kept for the solve; diag,
// blk and the assembly scratch live in an mgScratch while the levels are
// built, and are dropped after.
type gLevel struct {
	n    int
	ptr  []int32   // row I holds entries ptr[I] to ptr[I+1]
	col  []int32   // neighbour of each entry
	val  []float32 // conductance of each entry (minus the matrix entry)
	invd []float32 // 1/A_II, 0 where A_II is 0
	f, x []float32 // right-hand side, iterate
	x1   []float32 // the first V-cycle's result in a two-step cycle
	agg  []int32   // aggregate of each node on the next level
	slab []int32   // node bounds of the level's slabs (see setSlabs), nil when it is swept whole

	// while building
	diag []float64 // diagonal of A
	blk  []int32   // block coordinates (3 per node) on the block grid of dims
	dims [3]int
	sc   *mgScratch
}

// mgScratch holds the buffers used only while the coarse levels are
// built: the diagonals and block coordinates of two consecutive levels
// (level k uses index k&1), the raw (unmerged) entries of the level being
// assembled and the counting and merging scratch.
type mgScratch struct {
	diag     [2][]float64
	blk      [2][]int32
	rcol     []int32
	rval     []float32
	cnt, pos []int32
	rmax     []float32 // largest entry of each row, and
	strong   []bool    // whether the row has a strong entry, while aggregating
}

// forward and backward are Gauss–Seidel sweeps on A x = f over the nodes
// [lo, hi), in node order and in reverse; backward is the adjoint of
// forward.
func (c *gLevel) forward(lo, hi int32) {
	ptr, col, val, invd, f, x := c.ptr[:c.n+1], c.col, c.val, c.invd[:c.n], c.f[:c.n], c.x
	for i := lo; i < hi; i++ {
		if m := invd[i]; m != 0 {
			x[i] = float32(gsValue(col, val, x, ptr[i], ptr[i+1], float64(f[i])) * float64(m))
		}
	}
}

func (c *gLevel) backward(lo, hi int32) {
	ptr, col, val, invd, f, x := c.ptr[:c.n+1], c.col, c.val, c.invd[:c.n], c.f[:c.n], c.x
	for i := hi - 1; i >= lo; i-- {
		if m := invd[i]; m != 0 {
			x[i] = float32(gsValue(col, val, x, ptr[i], ptr[i+1], float64(f[i])) * float64(m))
		}
	}
}

// Slabs. A coarse level of at least mgSlabMinNodes nodes is cut into an
// even number (at most mgSlabs) of slabs: runs of its block grid's z
// planes, each starting at an even plane. Its entries join only nodes of
// neighbouring planes (each comes from a bond between face neighbours), so
// a slab touches only the slabs before and after it, and the even slabs,
// and then the odd ones, can be swept at the same time: a Gauss–Seidel
// sweep in this two-colour order of slabs (and its reverse, the adjoint)
// gives the same result whether the slabs run one after another or in
// parallel. Restriction and prolongation run by slab too: the nodes of a
// next-level aggregate lie in one pair of planes, so in one slab. The
// order does not depend on the number of workers, so neither do the
// iterates.
const (
	mgSlabs        = 16
	mgSlabMinNodes = 4096
)

// setSlabs cuts level c into slabs from its nodes' block coordinates
// (c.blk on the grid c.dims), or leaves c.slab nil (the level is swept
// whole, in node order) when it is small, its block grid has fewer than
// four planes, or its nodes are not in order of plane (which the
// numbering of aggregates gives) or an entry joins two slabs of one colour.
func (c *gLevel) setSlabs() {
	c.slab = c.slab[:0]
	pairs := (c.dims[2] + 1) / 2
	ns := min(mgSlabs, pairs) &^ 1
	if c.n < mgSlabMinNodes || ns < 2 {
		c.slab = nil
		return
	}
	// Slab k holds the plane pairs [k·pairs/ns, (k+1)·pairs/ns).
	slabOf := func(I int) int {
		return (int(c.blk[3*I+2]) / 2 * ns) / pairs
	}
	c.slab = append(c.slab, 0)
	prev := 0
	for I := range c.n {
		k := slabOf(I)
		if k < prev {
			c.slab = nil
			return
		}
		for ; prev < k; prev++ {
			c.slab = append(c.slab, int32(I))
		}
	}
	for ; prev < ns; prev++ {
		c.slab = append(c.slab, int32(c.n))
	}
	for I := range c.n {
		a := slabOf(I)
		for e := c.ptr[I]; e < c.ptr[I+1]; e++ {
			b := slabOf(int(c.col[e]))
			if a != b && (a-b)&1 == 0 {
				c.slab = nil
				return
			}
		}
	}
}

// eachSlab runs f on the slabs k = first, first+step, … < ns of a level,
// spread over the solver's workers, and waits for all.
func (s *Solver) eachSlab(ns, first, step int, f func(k int)) {
	cnt := (ns - first + step - 1) / step
	w := min(s.workers, cnt)
	if w <= 1 {
		for k := first; k < ns; k += step {
			f(k)
		}
		return
	}
	var wg sync.WaitGroup
	for j := 1; j < w; j++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for q := j; q < cnt; q += w {
				f(first + q*step)
			}
		}()
	}
	for q := 0; q < cnt; q += w {
		f(first + q*step)
	}
	wg.Wait()
}

// forwardSweep and backwardSweep are the Gauss–Seidel sweeps of level c,
// by slabs when it has them: the even slabs then the odd ones forward,
// the odd ones then the even ones backward, each in reverse node order.
func (s *Solver) forwardSweep(c *gLevel) {
	if c.slab == nil {
		c.forward(0, int32(c.n))
		return
	}
	ns := len(c.slab) - 1
	for colour := range 2 {
		s.eachSlab(ns, colour, 2, func(k int) { c.forward(c.slab[k], c.slab[k+1]) })
	}
}

func (s *Solver) backwardSweep(c *gLevel) {
	if c.slab == nil {
		c.backward(0, int32(c.n))
		return
	}
	ns := len(c.slab) - 1
	for colour := 1; colour >= 0; colour-- {
		s.eachSlab(ns, colour, 2, func(k int) { c.backward(c.slab[k], c.slab[k+1]) })
	}
}

// byRange runs f on the node ranges of level c's slabs in parallel, or on
// all its nodes at once.
func (s *Solver) byRange(c *gLevel, f func(lo, hi int32)) {
	if c.slab == nil {
		f(0, int32(c.n))
		return
	}
	s.eachSlab(len(c.slab)-1, 0, 1, func(k int) { f(c.slab[k], c.slab[k+1]) })
}

// gsValue returns v + Σ val[k]·x[col[k]] over the entries [lo, hi) of a
// row, summed in entry order.
func gsValue(col []int32, val []float32, x []float32, lo, hi int32, v float64) float64 {
	cols, vals := col[lo:hi], val[lo:hi]
	vals = vals[:len(cols)]
	for k, j := range cols {
		v += float64(vals[k]) * float64(x[j])
	}
	return v
}

// uf is a union–find forest over int32 node numbers; the root of a set is
// its smallest node, so the forest does not depend on the order of unions.
type uf []int32

func (u uf) find(a int32) int32 {
	for u[a] != a {
		u[a] = u[u[a]]
		a = u[a]
	}
	return a
}

func (u uf) union(a, b int32) {
	ra, rb := u.find(a), u.find(b)
	if ra < rb {
		u[rb] = ra
	} else if rb < ra {
		u[ra] = rb
	}
}

func growI32(b []int32, n int) []int32 { return grow(b, n) }

// edgeSource is a finer level seen from the level built on its
// aggregates: it visits each of its bonds once with emit, as a pair of
// aggregates, and each of its diagonal entries with addDiag.
type edgeSource interface {
	visitEdges(c *gLevel, pass int)
	visitDiag(c *gLevel)
}

// emit takes the bond g between aggregates I and J: on pass 0 it counts the
// entries of I and J, or takes 2g from the diagonal when I = J; on pass 1
// it writes the entries.
func (c *gLevel) emit(pass int, I, J int32, g float32) {
	if I == J {
		if pass == 0 {
			c.diag[I] -= 2 * float64(g)
		}
		return
	}
	sc := c.sc
	if pass == 0 {
		sc.cnt[I+1]++
		sc.cnt[J+1]++
		return
	}
	fill := c.ptr
	sc.rcol[fill[I]], sc.rval[fill[I]] = J, g
	fill[I]++
	sc.rcol[fill[J]], sc.rval[fill[J]] = I, g
	fill[J]++
}

// assemble builds level c, of nc nodes, from the finer level src: the
// Galerkin operator Pᵀ A P of piecewise-constant interpolation P.
// c.diag must be set to a buffer of at least nc and c.sc to the build
// scratch.
func (c *gLevel) assemble(nc int, src edgeSource) {
	sc := c.sc
	c.n = nc
	c.ptr = growI32(c.ptr, nc+1)
	sc.cnt = growI32(sc.cnt, nc+1)
	c.diag = c.diag[:nc]
	c.invd = grow(c.invd, nc)
	c.f = grow(c.f, nc)
	c.x = grow(c.x, nc)
	clear(sc.cnt)
	clear(c.diag)
	src.visitDiag(c)
	src.visitEdges(c, 0)
	for I := range nc {
		sc.cnt[I+1] += sc.cnt[I]
	}
	m := int(sc.cnt[nc])
	sc.rcol = growI32(sc.rcol, m)
	sc.rval = grow(sc.rval, m)
	// Fill the raw entries row by row, in the order the bonds are visited,
	// with ptr as the fill cursors, then merge duplicates.
	copy(c.ptr[:nc], sc.cnt[:nc])
	src.visitEdges(c, 1)
	c.merge()
	for I, d := range c.diag {
		c.invd[I] = 0
		if d > 1e-30 { // 1/d within single precision
			c.invd[I] = float32(1 / d)
		}
	}
}

// merge compacts the raw rows (in the scratch, bounds in cnt) by summing
// the entries of each row that share a neighbour, and sets ptr, col and
// val, the latter two sized to the merged entries.
func (c *gLevel) merge() {
	nc, sc := c.n, c.sc
	where := growI32(sc.pos, nc) // position of neighbour J in the current row, or −1
	for i := range where {
		where[i] = -1
	}
	sc.pos = where
	rcol, rval := sc.rcol, sc.rval
	out := int32(0)
	for I := range nc {
		lo, hi := sc.cnt[I], sc.cnt[I+1]
		c.ptr[I] = out
		start := out
		for k := lo; k < hi; k++ {
			J, g := rcol[k], rval[k]
			if w := where[J]; w >= start {
				rval[w] += g
				continue
			}
			where[J] = out
			rcol[out], rval[out] = J, g
			out++
		}
		for k := start; k < out; k++ {
			where[rcol[k]] = -1
		}
	}
	c.ptr[nc] = out
	c.col = append(c.col[:0], rcol[:out]...)
	c.val = append(c.val[:0], rval[:out]...)
}

// aggregate groups the nodes of c into the connected components, by
// strong entries, of each 2×2×2 block of its block grid, numbered in node
// order, sets c.agg and the block grid of next, and returns the number of
// aggregates. An entry g_IJ is strong when g_IJ ≥ θ·max(m_I, m_J), m being
// each row's largest entry and θ mgStrongCoarse. A node with no strong
// entry at all is bonded only weakly to every neighbour, and its value is
// set by them: it is left out of the next level (agg −1) and corrected by
// the smoothing alone.
func (c *gLevel) aggregate(next *gLevel, u uf) int {
	u = u[:c.n]
	for i := range u {
		u[i] = int32(i)
	}
	sc := c.sc
	rmax := grow(sc.rmax, c.n)
	strong := grow(sc.strong, c.n)
	sc.rmax, sc.strong = rmax, strong
	for I := range c.n {
		var m float32
		for _, v := range c.val[c.ptr[I]:c.ptr[I+1]] {
			m = max(m, v)
		}
		rmax[I], strong[I] = m, false
	}
	for I := range c.n {
		bi := c.blk[3*I : 3*I+3]
		for k := c.ptr[I]; k < c.ptr[I+1]; k++ {
			J, g := c.col[k], c.val[k]
			if g == 0 || g < mgStrongCoarse*max(rmax[I], rmax[J]) {
				continue
			}
			strong[I] = true
			if int(J) <= I {
				continue
			}
			bj := c.blk[3*J : 3*J+3]
			if bi[0]>>1 == bj[0]>>1 && bi[1]>>1 == bj[1]>>1 && bi[2]>>1 == bj[2]>>1 {
				u.union(int32(I), J)
			}
		}
	}
	c.agg = growI32(c.agg, c.n)
	next.dims = [3]int{(c.dims[0] + 1) / 2, (c.dims[1] + 1) / 2, (c.dims[2] + 1) / 2}
	next.blk = next.blk[:0]
	na := 0
	for I := range c.n {
		r := u.find(int32(I))
		if int(r) == I && !strong[I] {
			c.agg[I] = -1 // alone, and no strong entry: left out
			continue
		}
		if int(r) == I {
			c.agg[I] = int32(na)
			na++
			b := c.blk[3*I : 3*I+3]
			next.blk = append(next.blk, b[0]>>1, b[1]>>1, b[2]>>1)
			continue
		}
		c.agg[I] = c.agg[r]
	}
	return na
}

func (c *gLevel) visitEdges(next *gLevel, pass int) {
	for I := range c.n {
		for k := c.ptr[I]; k < c.ptr[I+1]; k++ {
			if J := c.col[k]; int(J) > I && c.agg[I] >= 0 && c.agg[J] >= 0 {
				next.emit(pass, c.agg[I], c.agg[J], c.val[k])
			}
		}
	}
}

func (c *gLevel) visitDiag(next *gLevel) {
	for i := range c.n {
		if c.agg[i] < 0 {
			continue
		}
		next.diag[c.agg[i]] += c.diag[i]
	}
}

// restrict sets next.f = Pᵀ (f − A x) from the nodes [lo, hi) (next.f
// cleared before).
func (c *gLevel) restrict(next *gLevel, lo, hi int32) {
	cf := next.f[:next.n]
	ptr, col, val, invd, f, x, agg := c.ptr[:c.n+1], c.col, c.val, c.invd[:c.n], c.f[:c.n], c.x, c.agg[:c.n]
	for i := lo; i < hi; i++ {
		m := invd[i]
		if m == 0 || agg[i] < 0 {
			continue
		}
		cf[agg[i]] += float32(gsValue(col, val, x, ptr[i], ptr[i+1], float64(f[i])-float64(x[i])/float64(m)))
	}
}

// prolong adds x += P (next.x) on the nodes [lo, hi).
func (c *gLevel) prolong(next *gLevel, lo, hi int32) {
	x, invd, agg := c.x[:c.n], c.invd[:c.n], c.agg[:c.n]
	for i := lo; i < hi; i++ {
		if invd[i] != 0 && agg[i] >= 0 {
			x[i] += next.x[agg[i]]
		}
	}
}

// vcycle sets x ≈ A⁻¹ f on coarse level k (s.mg[k]) and below: forward
// Gauss–Seidel sweeps from x = 0, the coarse correction, and as many
// backward sweeps, so that the cycle is symmetric.
func (s *Solver) vcycle(k int) {
	c := &s.mg[k]
	clear(c.x[:c.n])
	if k == len(s.mg)-1 {
		for range mgCoarseSweeps {
			c.forward(0, int32(c.n))
			c.backward(0, int32(c.n))
		}
		return
	}
	sw := mgSweeps
	if k == 0 {
		sw = mgSweeps1
	}
	for range sw {
		s.forwardSweep(c)
	}
	next := &s.mg[k+1]
	clear(next.f[:next.n])
	s.byRange(c, func(lo, hi int32) { c.restrict(next, lo, hi) })
	s.cycle(k + 1)
	s.byRange(c, func(lo, hi int32) { c.prolong(next, lo, hi) })
	for range sw {
		s.backwardSweep(c)
	}
}

// cycle sets x ≈ A⁻¹ f on coarse level k and below: a V-cycle, or on
// the levels from mgTwoStepFrom to mgTwoStepTo (not the coarsest) two of
// them with a polynomial step on level mgTwoStepLevel (unless it is the
// coarsest),
//
//	x = B f + ω B (f − A B f),
//
// B being the V-cycle from level k. With B symmetric and the eigenvalues
// μ of BA in (0, 1], this is again symmetric, and positive definite for
// every ω > 0 ((1 + ω) − ωμ > 0); its error factor (1 − μ)(1 − ωμ) damps
// the smooth errors that one V-cycle leaves (μ near a small lower bound a)
// much more than two plain cycles, (1 − μ)², for ω near the optimum of
// the range [a, 1].
func (s *Solver) cycle(k int) {
	if k != mgTwoStepLevel || k >= len(s.mg)-1 {
		s.vcycle(k)
		return
	}
	c := &s.mg[k]
	n := c.n
	s.vcycle(k)
	c.x1 = grow(c.x1, n)
	x1, x, f := c.x1[:n], c.x[:n], c.f[:n]
	copy(x1, x)
	// f − A x1 in place of f.
	ptr, invd := c.ptr[:n+1], c.invd[:n]
	s.byRange(c, func(lo, hi int32) {
		for i := lo; i < hi; i++ {
			if m := invd[i]; m == 0 {
				f[i] = 0
			} else {
				f[i] = float32(gsValue(c.col, c.val, x1, ptr[i], ptr[i+1], float64(f[i])-float64(x1[i])/float64(m)))
			}
		}
	})
	s.vcycle(k)
	for i := range n {
		x[i] = x1[i] + mgTwoStepOmega*x[i]
	}
}

// coloured reports whether the parity of x + y + z is a proper two-colouring
// of the fine level's bonds, which fails across an odd periodic edge.
func (s *Solver) coloured() bool {
	for a, n := range s.box.dims() {
		if n > 1 && n%2 == 1 && s.box.Periodic[a] {
			return false
		}
	}
	return true
}

// Aggregate codes. The aggregates of coarse level 0 are numbered block by
// block (the 2×2×2 blocks of the box in raster order of the block grid,
// the aggregates of one block in the order of their first voxel), so that
// voxel i's aggregate is s.bfirst[b] + k, b being its block and k < 8 its
// rank among the block's aggregates. The rank is kept in bits 4–6 of
// s.act[i], beside the spanned axes in bits 0–2, with bit 3 (aggMember)
// set for the voxels of an aggregate: one byte per voxel and an int32 per
// block (half a byte per voxel) in place of an int32 aggregate per voxel.
const (
	aggMember = 1 << 3
	aggShift  = 4
	aggBits   = 0xf8 // member flag and rank
)

// blockRow returns the entries of s.bfirst for the blocks that hold voxel
// row (y, z): entry x/2 is the first aggregate of the block of voxel x.
func (s *Solver) blockRow(y, z int) []int32 {
	bx, by := (s.box.NX+1)/2, (s.box.NY+1)/2
	o := bx * (y/2 + by*(z/2))
	return s.bfirst[o : o+bx]
}

// aggOf returns the aggregate on coarse level 0 of voxel (x, y, z), or −1
// when it is in none (off the active set).
func (s *Solver) aggOf(x, y, z int) int32 {
	m := s.act[s.box.Index(x, y, z)]
	if m&aggMember == 0 {
		return -1
	}
	return s.blockRow(y, z)[x>>1] + int32(m>>aggShift)
}

// fineAggregates groups the active voxels of the fine level into the
// connected components (by bonds with g > 0) of each 2×2×2 block,
// numbered as the aggregate codes above say, writes the codes and
// s.bfirst and level c's block grid, and returns the number of
// aggregates. Two face neighbours of the active set are always bonded
// (both conduct), so a component is found by a flood fill inside its
// block from its first voxel.
func (s *Solver) fineAggregates(c *gLevel) int {
	box := s.box
	nx, ny, nz := box.NX, box.NY, box.NZ
	plane := nx * ny
	a := s.axisA
	for i, m := range s.act {
		s.act[i] = m &^ aggBits
	}
	c.dims = [3]int{(nx + 1) / 2, (ny + 1) / 2, (nz + 1) / 2}
	s.bfirst = growI32(s.bfirst, c.dims[0]*c.dims[1]*c.dims[2])
	c.blk = c.blk[:0]
	na, b := int32(0), 0
	for bz := range c.dims[2] {
		for by := range c.dims[1] {
			for bx := range c.dims[0] {
				first := na
				s.bfirst[b] = first
				b++
				for z := 2 * bz; z < min(2*bz+2, nz); z++ {
					for y := 2 * by; y < min(2*by+2, ny); y++ {
						for x := 2 * bx; x < min(2*bx+2, nx); x++ {
							i := x + nx*(y+ny*z)
							if m := s.act[i]; m>>a&1 == 0 || m&aggMember != 0 {
								continue
							}
							code := aggMember | uint8(na-first)<<aggShift
							s.act[i] |= code
							c.blk = append(c.blk, int32(bx), int32(by), int32(bz))
							st := append(s.stack[:0], int32(i))
							for len(st) > 0 {
								j := int(st[len(st)-1])
								st = st[:len(st)-1]
								jx, jy, jz := j%nx, (j/nx)%ny, j/plane
								try := func(ok bool, k int) {
									if ok && s.act[k]>>a&1 != 0 && s.act[k]&aggMember == 0 && s.strongBond(j, k) {
										s.act[k] |= code
										st = append(st, int32(k))
									}
								}
								try(jx&1 == 0 && jx+1 < nx, j+1)
								try(jx&1 == 1, j-1)
								try(jy&1 == 0 && jy+1 < ny, j+nx)
								try(jy&1 == 1, j-nx)
								try(jz&1 == 0 && jz+1 < nz, j+plane)
								try(jz&1 == 1, j-plane)
							}
							s.stack = st
							na++
						}
					}
				}
			}
		}
	}
	return int(na)
}

// strongBond reports whether the bond between face neighbours i and j of
// the fine level (in one 2×2×2 block, so not across a face of the box) is
// strong: g_ij ≥ θ·max(m_i, m_j), m being each voxel's largest bond
// conductance and θ mgStrongFine. A pore voxel and a C-S-H voxel beside it
// are bonded weakly (1/200 against the pore's bonds of 1), so that a block
// where two pore channels meet only through C-S-H keeps them apart.
func (s *Solver) strongBond(i, j int) bool {
	g := s.gt[int(s.cls[i])<<8|int(s.cls[j])]
	return g >= mgStrongFine*max(s.maxBond(i), s.maxBond(j))
}

// maxBond returns the largest conductance of the bonds of voxel i.
func (s *Solver) maxBond(i int) float32 {
	x, y, z := s.box.Coords(i)
	cr, cym, cyp, czm, czp, row, _, _, _, _ := s.rowClasses(y, z)
	nx := s.box.NX
	cxp, cxm := s.cls[row+(x+1)%nx], s.cls[row+(x+nx-1)%nx]
	if !s.box.Periodic[0] || nx == 1 {
		if x == nx-1 {
			cxp = sentinel
		}
		if x == 0 {
			cxm = sentinel
		}
	}
	ci := int(cr[x]) << 8
	t := s.gt
	return max(t[ci|int(cxp)], t[ci|int(cxm)], t[ci|int(cyp[x])], t[ci|int(cym[x])], t[ci|int(czp[x])], t[ci|int(czm[x])])
}

// assembleFine builds coarse level c, of nc aggregates, from the fine
// level: the Galerkin operator Pᵀ A P, aggregate by aggregate. The voxels
// of aggregate I lie in its 2×2×2 block; their bonds to other aggregates J
// are summed into the entry (I, J) of row I, in the order they are met
// (voxels in raster order, bonds +x, −x, +y, −y, +z, −z), and the diagonal
// is the sum of their diagonals less each bond inside the aggregate, met
// once from each end. The rows are written in order, merged as they are
// formed, so no unmerged entries are held.
func (s *Solver) assembleFine(c *gLevel, nc int) {
	box := s.box
	nx, ny, nz := box.NX, box.NY, box.NZ
	dims := box.dims()
	c.n = nc
	c.ptr = growI32(c.ptr, nc+1)
	c.diag = c.diag[:nc]
	c.invd = grow(c.invd, nc)
	c.f = grow(c.f, nc)
	c.x = grow(c.x, nc)
	c.col, c.val = c.col[:0], c.val[:0]
	dg := s.rows[0][1]
	for I := range nc {
		c.ptr[I] = int32(len(c.col))
		start := len(c.col)
		var diag float64
		b := c.blk[3*I : 3*I+3]
		code := aggMember | uint8(I-int(s.bfirst[int(b[0])+c.dims[0]*(int(b[1])+c.dims[1]*int(b[2]))]))<<aggShift
		for z := 2 * int(b[2]); z < min(2*int(b[2])+2, nz); z++ {
			for y := 2 * int(b[1]); y < min(2*int(b[1])+2, ny); y++ {
				for x := 2 * int(b[0]); x < min(2*int(b[0])+2, nx); x++ {
					i := box.Index(x, y, z)
					if s.act[i]&aggBits != code {
						continue
					}
					s.gather(nil, y, z, x, nx, nil, dg)
					diag += dg[x]
					ci := int(s.cls[i]) << 8
					for k := range 3 {
						if dims[k] == 1 {
							continue // no bond to itself
						}
						for _, step := range [2]int{1, -1} {
							q := [3]int{x, y, z}
							q[k] += step
							if q[k] < 0 || q[k] >= dims[k] {
								if !box.Periodic[k] {
									continue
								}
								q[k] = (q[k] + dims[k]) % dims[k]
							}
							j := box.Index(q[0], q[1], q[2])
							g := s.gt[ci|int(s.cls[j])]
							if g == 0 {
								continue
							}
							J := s.aggOf(q[0], q[1], q[2])
							if J == int32(I) {
								diag -= float64(g)
								continue
							}
							found := false
							for e := start; e < len(c.col); e++ {
								if c.col[e] == J {
									c.val[e] += g
									found = true
									break
								}
							}
							if !found {
								c.col = append(c.col, J)
								c.val = append(c.val, g)
							}
						}
					}
				}
			}
		}
		c.diag[I] = diag
		c.invd[I] = 0
		if diag > 1e-30 { // 1/diag within single precision
			c.invd[I] = float32(1 / diag)
		}
	}
	c.ptr[nc] = int32(len(c.col))
}

// mgBuild builds the coarse levels for the current axis, unless the levels
// of the previous axis of this solve serve: the same active clusters and
// no electrodes (then the operator is the same).
func (s *Solver) mgBuild() {
	s.useMG = !s.jacobiOnly && s.box.Len() > mgCoarsestLen
	if !s.useMG {
		return
	}
	a := s.axisA
	if s.hierOK && s.elec < 0 && s.hierElec < 0 && len(s.hierAct) == len(s.spans) {
		same := true
		for c, sp := range s.spans {
			same = same && sp[a] == s.hierAct[c]
		}
		if same {
			return
		}
	}
	s.hierOK, s.hierElec = true, s.elec
	s.hierAct = s.hierAct[:0]
	for _, sp := range s.spans {
		s.hierAct = append(s.hierAct, sp[a])
	}
	if cap(s.mg) == 0 {
		s.mg = append(s.mg, gLevel{})
	}
	s.mg = s.mg[:1]
	// The build scratch is dropped when the levels are built, so that it
	// and the conjugate-gradient vectors, allocated after the first
	// build, need not be held at once.
	sc := &mgScratch{}
	defer func() {
		for k := range s.mg {
			c := &s.mg[k]
			c.diag, c.blk, c.sc = nil, nil, nil
		}
		s.cuf = nil
	}()
	c := &s.mg[0]
	c.sc, c.blk = sc, sc.blk[0][:0]
	nc := s.fineAggregates(c)
	sc.blk[0] = c.blk
	sc.diag[0] = grow(sc.diag[0], nc)
	c.diag = sc.diag[0]
	s.assembleFine(c, nc)
	c.setSlabs()
	for {
		c := &s.mg[len(s.mg)-1]
		if c.n <= mgCoarsestLen || c.dims == [3]int{1, 1, 1} {
			return
		}
		if len(s.mg) < cap(s.mg) {
			s.mg = s.mg[:len(s.mg)+1]
		} else {
			s.mg = append(s.mg, gLevel{})
		}
		k := len(s.mg) - 1
		c = &s.mg[k-1]
		next := &s.mg[k]
		next.sc, next.blk = sc, sc.blk[k&1][:0]
		s.cuf = growI32(s.cuf, c.n)
		nn := c.aggregate(next, uf(s.cuf))
		sc.blk[k&1] = next.blk
		if nn == c.n || nn == 0 {
			s.mg = s.mg[:k]
			return
		}
		sc.diag[k&1] = grow(sc.diag[k&1], nn)
		next.diag = sc.diag[k&1]
		next.assemble(nn, c)
		next.setSlabs()
	}
}

// mgPrecond computes z = M r by one V-cycle from the fine level and returns
// r·z. z is 0 off the active set. The fine-level passes run over z planes
// with per-plane sums, like the rest of the solve; the half sweeps run on
// one worker when the colouring is not proper (see above).
//
// started says that the first half sweep (z = D⁻¹r on red, 0 on black)
// was done already, by the residual update of conjugate gradients.
func (s *Solver) mgPrecond(started bool) float64 {
	for k := range 2 * mgFineSweeps {
		if k == 0 && started {
			continue
		}
		s.mgColour, s.mgFirst, s.mgReverse = k&1, k == 0, false
		s.sweepPass()
	}
	// After the black half sweep the residual vanishes on the black voxels
	// when the colouring is proper: only the red ones are formed and
	// restricted.
	s.resColour = -1
	if s.coloured() && mgFineSweeps > 0 {
		s.resColour = 0
	}
	clear(s.mg[0].f[:s.mg[0].n])
	s.parallelEven(passMGResidual)
	s.cycle(0)
	s.parallel(passMGProlong)
	for k := range 2 * mgFineSweeps {
		if k == 2*mgFineSweeps-2 {
			clear(s.part) // r·z over the last pair, which sets every voxel
		}
		s.mgColour, s.mgFirst, s.mgReverse = (k+1)&1, false, true
		s.sweepPass()
	}
	rz, _, _ := s.sums()
	return rz
}

// sweepPass runs a fine half sweep, in parallel when the colouring is
// proper, else on one worker in raster order (reverse raster order when
// s.mgReverse).
func (s *Solver) sweepPass() {
	if s.coloured() {
		s.parallel(passMGSweep)
		return
	}
	if s.mgFirst {
		clear(s.z)
	}
	s.sweep(s.z, s.r, s.mgColour, false, s.mgReverse, 0, s.box.NZ)
}

// sweep does a half sweep of Gauss–Seidel on A x = f over the voxels of
// colour c in the planes [z0, z1), in raster order or, when reverse, in
// reverse raster order,
//
//	x_i = (f_i + Σ_j g_ij x_j) · m_i,
//
// m_i = 1/A_ii rounded to single precision (the same in every sweep, so
// that the cycle stays symmetric), or, when first, sets
// x = D⁻¹f on colour c and x = 0 on the other colour (the half sweep from
// x = 0 on a properly coloured level). It adds Σ f_i x_i per plane to
// s.part. On a properly coloured level no two voxels of colour c touch, so
// the order does not matter; otherwise the only neighbours of one colour
// within a row are x = 0 and x = NX−1 across an odd periodic edge, and the
// one of them that comes later in the sweep is updated after the others.
func (s *Solver) sweep(x, f []float32, c int, first, reverse bool, z0, z1 int) {
	nx, ny := s.box.NX, s.box.NY
	wrapX := nx > 1 && nx%2 == 1 && s.box.Periodic[0]
	for zz := z0; zz < z1; zz++ {
		z := zz
		if reverse {
			z = z0 + z1 - 1 - zz
		}
		var fx float64
		for yy := range ny {
			y := yy
			if reverse {
				y = ny - 1 - yy
			}
			row := nx * (y + ny*z)
			xr, fr := x[row:row+nx], f[row : row+nx][:nx]
			x0 := (c + y + z) & 1
			mr := s.dcode[row : row+nx][:nx]
			if first {
				clear(xr)
				for i := x0; i < nx; i += 2 {
					if m := s.minv(row + i); m != 0 {
						v := float32(float64(fr[i]) * float64(m))
						xr[i] = v
						fx += float64(fr[i]) * float64(v)
					}
				}
				continue
			}
			lo, hi := x0, nx // the voxels updated together
			late := -1       // the one updated after them
			if wrapX && x0 == 0 {
				if reverse {
					late, lo, hi = 0, 2, nx-1
					fx += s.gsEnd(x, f, y, z, nx-1)
				} else {
					late, hi = nx-1, nx-1
				}
			}
			// The ends of the row go through gsValue32 (their x neighbours
			// wrap or are cut), the interior through sweepRow.
			if lo < hi {
				ilo, ihi := lo, hi
				lastEl := lo + 2*((hi-1-lo)/2)
				if lo == 0 {
					fx += s.gsEnd(x, f, y, z, 0)
					ilo = 2
				}
				if lastEl == nx-1 && lastEl != 0 {
					fx += s.gsEnd(x, f, y, z, lastEl)
					ihi = lastEl
				}
				if ilo < ihi {
					fx += s.sweepRow(x, fr, mr, y, z, ilo, ihi)
				}
			}
			if late >= 0 {
				fx += s.gsEnd(x, f, y, z, late)
			}
		}
		s.part[z][0] += fx
	}
}

// sweepRow is the Gauss–Seidel update x_i = (f_i + Σ_j g_ij x_j)·m_i of
// the voxels lo, lo+2, … < hi of row (y, z) with 0 < lo and hi < NX (no
// wrap along x) and m_i ≠ 0 (mr holds the codes of m, see encodeDiag), each from the values before the call, in
// single precision as gsValue32 computes it; it returns Σ f_i x_i.
func (s *Solver) sweepRow(x, fr []float32, mr []uint8, y, z, lo, hi int) float64 {
	nx := s.box.NX
	if lo == 0 {
		panic("percolation: sweepRow at x = 0")
	}
	g := s.gt
	cr, cym, cyp, czm, czp, row, ym, yp, zm, zp := s.rowClasses(y, z)
	cr, cym, cyp, czm, czp = cr[:nx], cym[:nx], cyp[:nx], czm[:nx], czp[:nx]
	vr, vym, vyp, vzm, vzp := x[row : row+nx][:nx], x[ym : ym+nx][:nx], x[yp : yp+nx][:nx], x[zm : zm+nx][:nx], x[zp : zp+nx][:nx]
	fr, mr = fr[:nx], mr[:nx]
	var fx float64
	tab := &s.dinv
	for i := lo; i < hi; i += 2 {
		mc := mr[i]
		if mc == 0 {
			continue
		}
		m := tab[mc]
		if mc == dEscape {
			m = s.minv(row + i)
		}
		ci := uint16(cr[i]) << 8
		sum := (g[ci|uint16(cr[i+1])]*vr[i+1] + g[ci|uint16(cr[i-1])]*vr[i-1]) +
			(g[ci|uint16(cyp[i])]*vyp[i] + g[ci|uint16(cym[i])]*vym[i]) +
			(g[ci|uint16(czp[i])]*vzp[i] + g[ci|uint16(czm[i])]*vzm[i])
		f := fr[i]
		v := (f + sum) * m
		vr[i] = v
		fx += float64(f) * float64(v)
	}
	return fx
}

// gsEnd sets x_i to its Gauss–Seidel value (gsValue32) for voxel x of row
// (y, z) when m_i ≠ 0 and returns f_i x_i.
func (s *Solver) gsEnd(xv, f []float32, y, z, x int) float64 {
	i := s.box.NX*(y+s.box.NY*z) + x
	if s.dcode[i] == 0 {
		return 0
	}
	v := s.gsValue32(xv, f, y, z, x)
	xv[i] = v
	return float64(f[i]) * float64(v)
}

// restrictResidual adds the residual f − A x of each active voxel of the
// planes [z0, z1) to the right-hand side cf of its aggregate (Pᵀ of the
// residual), visiting only the voxels of colour c when c ≥ 0 (the residual
// vanishes on the other colour). The voxels of one aggregate lie in one
// 2×2×2 block, so ranges of planes that start at even planes write
// disjoint entries of cf, each in the same order whatever the ranges.
func (s *Solver) restrictResidual(x, f []float32, cf []float32, c, z0, z1 int, q []float32) {
	nx, ny := s.box.NX, s.box.NY
	for z := z0; z < z1; z++ {
		for y := range ny {
			row := nx * (y + ny*z)
			x0, step := 0, 1
			if c >= 0 {
				x0, step = (c+y+z)&1, 2
			}
			s.applyRow(x, q, y, z, x0, step)
			fr, ar, br := f[row : row+nx][:nx], s.act[row : row+nx][:nx], s.blockRow(y, z)
			q = q[:nx]
			for i := x0; i < nx; i += step {
				if m := ar[i]; m&aggMember != 0 {
					cf[br[i>>1]+int32(m>>aggShift)] += fr[i] - q[i]
				}
			}
		}
	}
}

// mgPass runs the fine-level multigrid pass op on the planes [z0, z1).
func (s *Solver) mgPass(op, k, z0, z1 int) {
	switch op {
	case passMGSweep:
		s.sweep(s.z, s.r, s.mgColour, s.mgFirst, false, z0, z1)
	case passMGResidual:
		s.restrictResidual(s.z, s.r, s.mg[0].f, s.resColour, z0, z1, s.rows32[k])
	case passMGProlong: // z += P (coarse x), on red only when the black half sweep that follows overwrites black
		cx := s.mg[0].x
		nx, ny := s.box.NX, s.box.NY
		for z := z0; z < z1; z++ {
			for y := range ny {
				row := nx * (y + ny*z)
				x0, step := 0, 1
				if s.resColour >= 0 {
					x0, step = (s.resColour+y+z)&1, 2
				}
				xr, ar, br := s.z[row : row+nx][:nx], s.act[row : row+nx][:nx], s.blockRow(y, z)
				for i := x0; i < nx; i += step {
					if m := ar[i]; m&aggMember != 0 {
						xr[i] = float32(float64(xr[i]) + float64(cx[br[i>>1]+int32(m>>aggShift)]))
					}
				}
			}
		}
	}
}
