package percolation

// The preconditioner of the diffusivity solve is one V-cycle of
// aggregation multigrid.
//
// Level 0 is the voxel network on the active set. Level 1 groups its voxels
// into aggregates: the connected components, by bonds of nonzero
// conductance, of each 2×2×2 block (1 wide at an odd end). A block cut in
// two by insulating voxels thus gives two aggregates, and no aggregate ties
// together voxels that are joined only through far-away paths (about 7 %
// of the occupied blocks of a 28-day 100³ paste are cut; merging them, as
// plain geometric aggregation does, cost 1.6 times the iterations). Each
// further level groups the aggregates of the level below in the same way,
// by the 2×2×2 blocks of their block grid. With piecewise-constant
// interpolation P the Galerkin operator Pᵀ A P is again a conductance
// network on the aggregates, stored as compressed sparse rows: the bond
// between two aggregates is the sum of the finer conductances between them,
// and the diagonal is the sum of the finer diagonals less twice the bonds
// inside the aggregate.
//
// The fine level smooths with red–black Gauss–Seidel, the colour of a voxel
// being the parity of x + y + z: before the coarse correction it updates
// the red voxels (from z = 0) and then the black ones, after it the black
// and then the red ones, so that the sequence of half sweeps is a
// palindrome. After the black half sweep the residual vanishes on black, so
// only the red residual is formed and restricted, and only red voxels take
// the prolongated correction (the black ones are overwritten next). These
// passes walk compacted lists of the active voxels of each colour
// (colour.go) rather than the full rows. On an
// odd periodic edge two voxels of one colour meet across the face; the half
// sweeps then run on one worker over the whole level, in raster order
// before the coarse correction and in reverse raster order (the adjoint)
// after it, and every residual is formed. The coarse levels smooth with
// mgSweeps forward Gauss–Seidel sweeps before and as many backward sweeps
// after the correction below, and the coarsest level (at most
// mgCoarsestLen aggregates, or no further grouping possible) with
// mgCoarseSweeps symmetric sweeps from 0. Every smoothing step divides by
// the double-precision diagonal, so the cycle is a symmetric positive
// definite operator to rounding, as conjugate gradients need
// (TestMGSymmetric). Boxes of at most mgCoarsestLen voxels use the Jacobi
// diagonal alone.

// mgLevel is the fine level: the voxel network seen through the solver's
// arrays.
type mgLevel struct {
	nx, ny, nz int
	g          [3][]float32 // bond i → i+k, wrapped; 0 across open faces and off the active set
	diag       []float64    // diagonal of A, electrode links included
	invd       []float32    // 1/diag, 0 where diag is 0 (off the active set)
}

// Multigrid parameters: red–black Gauss–Seidel pairs before and after the
// coarse correction on the fine level (more than one pair cost more time
// than it saved in iterations), Gauss–Seidel sweeps before and after
// it on the coarse levels, symmetric sweeps on the coarsest level, and the
// size of the coarsest level.
const (
	mgFineSweeps   = 1
	mgSweeps       = 2
	mgCoarseSweeps = 8
	mgCoarsestLen  = 512
)

func (lv *mgLevel) len() int { return lv.nx * lv.ny * lv.nz }

// coloured reports whether the parity of x + y + z is a proper two-colouring
// of the level's bonds, which fails across an odd periodic edge.
func (lv *mgLevel) coloured() bool {
	return (lv.nx == 1 || lv.nx%2 == 0) && (lv.ny == 1 || lv.ny%2 == 0) && (lv.nz == 1 || lv.nz%2 == 0)
}

// offsets returns the offsets of the row (y, z) and of the rows at y−1,
// y+1 and z−1, z+1, wrapping.
func (lv *mgLevel) offsets(y, z int) (row, ym, yp, zm, zp int) {
	nx, ny, nz := lv.nx, lv.ny, lv.nz
	plane := nx * ny
	y0, y1, z0, z1 := y-1, y+1, z-1, z+1
	if y0 < 0 {
		y0 = ny - 1
	}
	if y1 == ny {
		y1 = 0
	}
	if z0 < 0 {
		z0 = nz - 1
	}
	if z1 == nz {
		z1 = 0
	}
	row = nx * (y + ny*z)
	return row, nx*y0 + plane*z, nx*y1 + plane*z, nx*y + plane*z0, nx*y + plane*z1
}

// sweep does a half sweep of Gauss–Seidel on A x = f over the voxels of
// colour c in the planes [z0, z1),
//
//	x_i = (f_i + Σ_j g_ij x_j) / A_ii
//
// (a division by the double-precision diagonal, so that the half sweep is
// exactly Gauss–Seidel and the cycle symmetric to rounding), or, when
// first, sets x = D⁻¹f on colour c and x = 0 on the other colour
// (the half sweep from x = 0). It returns, per plane in part when part is
// not nil, Σ f_i x_i over the voxels updated.
func (lv *mgLevel) sweep(x, f []float64, c int, first bool, z0, z1 int, part [][3]float64) {
	nx := lv.nx
	gx, gy, gz := lv.g[0], lv.g[1], lv.g[2]
	for z := z0; z < z1; z++ {
		var fx float64
		for y := range lv.ny {
			row, ym, yp, zm, zp := lv.offsets(y, z)
			x0 := (c + y + z) & 1
			xr := x[row : row+nx]
			n := len(xr)
			fr, mr := f[row : row+nx][:n], lv.diag[row : row+nx][:n]
			if first {
				for i := range xr {
					xr[i] = 0
				}
				for i := x0; i < n; i += 2 {
					if mr[i] == 0 {
						continue
					}
					v := fr[i] / mr[i]
					xr[i] = v
					fx += fr[i] * v
				}
				continue
			}
			xym, xyp := x[ym : ym+nx][:n], x[yp : yp+nx][:n]
			xzm, xzp := x[zm : zm+nx][:n], x[zp : zp+nx][:n]
			gxr := gx[row : row+nx][:n]
			gyr, gym := gy[row : row+nx][:n], gy[ym : ym+nx][:n]
			gzr, gzm := gz[row : row+nx][:n], gz[zm : zm+nx][:n]
			for i := x0; i < n; i += 2 {
				m := mr[i]
				if m == 0 {
					continue
				}
				ip, im := i+1, i-1
				if i == 0 || i == n-1 {
					ip, im = (i+1)%n, (i+n-1)%n
				}
				v := fr[i] + float64(gxr[i])*xr[ip] + float64(gxr[im])*xr[im] +
					float64(gyr[i])*xyp[i] + float64(gym[i])*xym[i] +
					float64(gzr[i])*xzp[i] + float64(gzm[i])*xzm[i]
				v /= m
				xr[i] = v
				fx += fr[i] * v
			}
		}
		if part != nil {
			part[z][0] += fx
		}
	}
}

// restrictResidual adds the residual f − A x of each active voxel of the
// planes [z0, z1) to the right-hand side cf of its aggregate agg (Pᵀ of
// the residual), visiting only the voxels of colour c when c ≥ 0 (the
// residual vanishes on the other colour). The voxels of one aggregate lie
// in one 2×2×2 block, so ranges of planes that start at even planes write
// disjoint entries of cf, each in the same order whatever the ranges.
func (lv *mgLevel) restrictResidual(x, f []float64, agg []int32, cf []float64, c, z0, z1 int) {
	nx := lv.nx
	gx, gy, gz := lv.g[0], lv.g[1], lv.g[2]
	for z := z0; z < z1; z++ {
		for y := range lv.ny {
			row, ym, yp, zm, zp := lv.offsets(y, z)
			xr := x[row : row+nx]
			n := len(xr)
			fr, dr, ar := f[row : row+nx][:n], lv.diag[row : row+nx][:n], agg[row : row+nx][:n]
			xym, xyp := x[ym : ym+nx][:n], x[yp : yp+nx][:n]
			xzm, xzp := x[zm : zm+nx][:n], x[zp : zp+nx][:n]
			gxr := gx[row : row+nx][:n]
			gyr, gym := gy[row : row+nx][:n], gy[ym : ym+nx][:n]
			gzr, gzm := gz[row : row+nx][:n], gz[zm : zm+nx][:n]
			x0, step := 0, 1
			if c >= 0 {
				x0, step = (c+y+z)&1, 2
			}
			for i := x0; i < n; i += step {
				I := ar[i]
				if I < 0 {
					continue
				}
				ip, im := i+1, i-1
				if i == 0 || i == n-1 {
					ip, im = (i+1)%n, (i+n-1)%n
				}
				cf[I] += fr[i] - dr[i]*xr[i] + float64(gxr[i])*xr[ip] + float64(gxr[im])*xr[im] +
					float64(gyr[i])*xyp[i] + float64(gym[i])*xym[i] +
					float64(gzr[i])*xzp[i] + float64(gzm[i])*xzm[i]
			}
		}
	}
}

// gLevel is a coarse level: a conductance network on the aggregates of the
// level below, stored as compressed rows of its off-diagonal conductances.
type gLevel struct {
	n        int
	ptr      []int32   // row I holds entries ptr[I] to ptr[I+1]
	col      []int32   // neighbour of each entry
	val      []float32 // conductance of each entry (minus the matrix entry)
	diag     []float64 // diagonal of A
	invd     []float64 // 1/diag, 0 where diag is 0
	f, x     []float64 // right-hand side, iterate
	blk      []int32   // block coordinates (3 per node) on the block grid of dims
	dims     [3]int
	agg      []int32 // aggregate of each node on the next level
	cnt, pos []int32 // assembly scratch
}

// forward and backward are Gauss–Seidel sweeps on A x = f in node order
// and in reverse; backward is the adjoint of forward.
func (c *gLevel) forward() {
	for i := range c.n {
		c.gsNode(i)
	}
}

func (c *gLevel) backward() {
	for i := c.n - 1; i >= 0; i-- {
		c.gsNode(i)
	}
}

func (c *gLevel) gsNode(i int) {
	m := c.invd[i]
	if m == 0 {
		return
	}
	v := c.f[i]
	lo, hi := c.ptr[i], c.ptr[i+1]
	cols, vals := c.col[lo:hi], c.val[lo:hi]
	vals = vals[:len(cols)]
	for k, j := range cols {
		v += float64(vals[k]) * c.x[j]
	}
	c.x[i] = v * m
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

// fineAggregates groups the active voxels of the fine level into the
// connected components (by bonds with g > 0) of each 2×2×2 block, numbered
// in the order of their first voxel, and sets up level c's block grid.
// It returns the number of aggregates.
func (s *Solver) fineAggregates(c *gLevel) int {
	f := &s.fine
	nx, ny, nz := f.nx, f.ny, f.nz
	n := f.len()
	s.agg = growI32(s.agg, n)
	s.uf = growI32(s.uf, n)
	u := uf(s.uf)
	for i := range u {
		u[i] = int32(i)
	}
	plane := nx * ny
	for z := range nz {
		for y := range ny {
			for x := range nx {
				i := x + nx*(y+ny*z)
				if f.invd[i] == 0 {
					continue
				}
				if x+1 < nx && x&1 == 0 && f.g[0][i] > 0 {
					u.union(int32(i), int32(i+1))
				}
				if y+1 < ny && y&1 == 0 && f.g[1][i] > 0 {
					u.union(int32(i), int32(i+nx))
				}
				if z+1 < nz && z&1 == 0 && f.g[2][i] > 0 {
					u.union(int32(i), int32(i+plane))
				}
			}
		}
	}
	// The roots are the smallest voxel of each component; number them in
	// voxel order.
	c.dims = [3]int{(nx + 1) / 2, (ny + 1) / 2, (nz + 1) / 2}
	c.blk = c.blk[:0]
	na := 0
	for i := range n {
		if f.invd[i] == 0 {
			s.agg[i] = -1
			continue
		}
		r := u.find(int32(i))
		if int(r) == i {
			s.agg[i] = int32(na)
			na++
			x, y, z := i%nx, (i/nx)%ny, i/plane
			c.blk = append(c.blk, int32(x/2), int32(y/2), int32(z/2))
			continue
		}
		s.agg[i] = s.agg[r]
	}
	return na
}

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
	if pass == 0 {
		c.cnt[I+1]++
		c.cnt[J+1]++
		return
	}
	fill := c.ptr
	c.col[fill[I]], c.val[fill[I]] = J, g
	fill[I]++
	c.col[fill[J]], c.val[fill[J]] = I, g
	fill[J]++
}

// assemble builds level c, of nc nodes, from the finer level src: the
// Galerkin operator Pᵀ A P of piecewise-constant interpolation P.
func (c *gLevel) assemble(nc int, src edgeSource) {
	c.n = nc
	c.ptr = growI32(c.ptr, nc+1)
	c.cnt = growI32(c.cnt, nc+1)
	c.diag = grow(c.diag, nc)
	c.invd = grow(c.invd, nc)
	c.f = grow(c.f, nc)
	c.x = grow(c.x, nc)
	clear(c.cnt)
	clear(c.diag)
	src.visitDiag(c)
	src.visitEdges(c, 0)
	for I := range nc {
		c.cnt[I+1] += c.cnt[I]
	}
	m := int(c.cnt[nc])
	c.col = growI32(c.col, m)
	c.val = grow(c.val, m)
	// Fill the raw entries row by row, in the order the bonds are visited,
	// with ptr as the fill cursors, then merge duplicates.
	copy(c.ptr[:nc], c.cnt[:nc])
	src.visitEdges(c, 1)
	c.merge()
	for I, d := range c.diag {
		c.invd[I] = 0
		if d > 1e-300 {
			c.invd[I] = 1 / d
		}
	}
}

// merge compacts the raw rows (bounds in cnt) by summing the entries of
// each row that share a neighbour, and sets ptr.
func (c *gLevel) merge() {
	nc := c.n
	where := growI32(c.pos, nc) // position of neighbour J in the current row, or −1
	for i := range where {
		where[i] = -1
	}
	c.pos = where
	out := int32(0)
	for I := range nc {
		lo, hi := c.cnt[I], c.cnt[I+1]
		c.ptr[I] = out
		start := out
		for k := lo; k < hi; k++ {
			J, g := c.col[k], c.val[k]
			if w := where[J]; w >= start {
				c.val[w] += g
				continue
			}
			where[J] = out
			c.col[out], c.val[out] = J, g
			out++
		}
		for k := start; k < out; k++ {
			where[c.col[k]] = -1
		}
	}
	c.ptr[nc] = out
}

// aggregate groups the nodes of c into the connected components (by
// entries with conductance > 0) of each 2×2×2 block of its block grid,
// numbered in node order, sets c.agg and the block grid of next, and
// returns the number of aggregates.
func (c *gLevel) aggregate(next *gLevel, u uf) int {
	u = u[:c.n]
	for i := range u {
		u[i] = int32(i)
	}
	for I := range c.n {
		bi := c.blk[3*I : 3*I+3]
		for k := c.ptr[I]; k < c.ptr[I+1]; k++ {
			J := c.col[k]
			if int(J) <= I || c.val[k] == 0 {
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
			if J := c.col[k]; int(J) > I {
				next.emit(pass, c.agg[I], c.agg[J], c.val[k])
			}
		}
	}
}

func (c *gLevel) visitDiag(next *gLevel) {
	for i := range c.n {
		next.diag[c.agg[i]] += c.diag[i]
	}
}

func (s *Solver) visitEdges(c *gLevel, pass int) {
	f, agg := &s.fine, s.agg
	nx := f.nx
	for z := range f.nz {
		for y := range f.ny {
			row, _, yp, _, zp := f.offsets(y, z)
			for x := range nx {
				i := row + x
				I := agg[i]
				if I < 0 {
					continue
				}
				xp := x + 1
				if xp == nx {
					xp = 0
				}
				if g := f.g[0][i]; g > 0 {
					c.emit(pass, I, agg[row+xp], g)
				}
				if g := f.g[1][i]; g > 0 {
					c.emit(pass, I, agg[yp+x], g)
				}
				if g := f.g[2][i]; g > 0 {
					c.emit(pass, I, agg[zp+x], g)
				}
			}
		}
	}
}

func (s *Solver) visitDiag(c *gLevel) {
	for i, I := range s.agg {
		if I >= 0 {
			c.diag[I] += s.fine.diag[i]
		}
	}
}

// restrict sets next.f = Pᵀ (f − A x).
func (c *gLevel) restrict(next *gLevel) {
	cf := next.f[:next.n]
	clear(cf)
	for i := range c.n {
		if c.invd[i] == 0 {
			continue
		}
		v := c.f[i] - c.diag[i]*c.x[i]
		for k := c.ptr[i]; k < c.ptr[i+1]; k++ {
			v += float64(c.val[k]) * c.x[c.col[k]]
		}
		cf[c.agg[i]] += v
	}
}

// prolong adds x += P (next.x).
func (c *gLevel) prolong(next *gLevel) {
	for i := range c.n {
		if c.invd[i] != 0 {
			c.x[i] += next.x[c.agg[i]]
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
			c.forward()
			c.backward()
		}
		return
	}
	for range mgSweeps {
		c.forward()
	}
	next := &s.mg[k+1]
	c.restrict(next)
	s.vcycle(k + 1)
	c.prolong(next)
	for range mgSweeps {
		c.backward()
	}
}

// mgBuild builds the coarse levels for the current axis from the fine
// network, masked to the active set, and the fine diagonal s.dg.
func (s *Solver) mgBuild() {
	s.mg = s.mg[:0]
	s.fine = mgLevel{nx: s.box.NX, ny: s.box.NY, nz: s.box.NZ, g: s.g, diag: s.dg, invd: s.invd}
	if s.fine.len() <= mgCoarsestLen {
		return
	}
	if cap(s.mg) == 0 {
		s.mg = append(s.mg, gLevel{})
	}
	s.mg = s.mg[:1]
	c := &s.mg[0]
	c.assemble(s.fineAggregates(c), s)
	if s.fine.coloured() {
		s.buildColourLists(s.agg)
	}
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
		c = &s.mg[len(s.mg)-2]
		next := &s.mg[len(s.mg)-1]
		s.uf = growI32(s.uf, c.n)
		nn := c.aggregate(next, uf(s.uf))
		if nn == c.n {
			s.mg = s.mg[:len(s.mg)-1]
			return
		}
		next.assemble(nn, c)
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
	if s.fine.coloured() && mgFineSweeps > 0 {
		s.resColour = 0
	}
	clear(s.mg[0].f[:s.mg[0].n])
	s.parallelEven(passMGResidual)
	s.vcycle(0)
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
// proper.
func (s *Solver) sweepPass() {
	if s.fine.coloured() {
		s.parallel(passMGSweep)
		return
	}
	if s.mgFirst {
		clear(s.z)
	}
	s.fine.sweepOrdered(s.z, s.r, s.mgColour, s.mgReverse, s.part)
}

// sweepOrdered is the half sweep of colour c for a level whose colouring
// is not proper: Gauss–Seidel over the voxels of colour c in raster order,
// or in reverse raster order (its adjoint) when reverse, on the whole
// level. It adds Σ f_i x_i per plane to part when part is not nil.
func (lv *mgLevel) sweepOrdered(x, f []float64, c int, reverse bool, part [][3]float64) {
	nx, ny, nz := lv.nx, lv.ny, lv.nz
	gx, gy, gz := lv.g[0], lv.g[1], lv.g[2]
	for zz := range nz {
		z := zz
		if reverse {
			z = nz - 1 - zz
		}
		var fx float64
		for yy := range ny {
			y := yy
			if reverse {
				y = ny - 1 - yy
			}
			row, ym, yp, zm, zp := lv.offsets(y, z)
			for xx := range nx {
				i := xx
				if reverse {
					i = nx - 1 - xx
				}
				if (c+i+y+z)&1 != 0 {
					continue
				}
				m := lv.diag[row+i]
				if m == 0 {
					continue
				}
				ip, im := (i+1)%nx, (i+nx-1)%nx
				v := f[row+i] + float64(gx[row+i])*x[row+ip] + float64(gx[row+im])*x[row+im] +
					float64(gy[row+i])*x[yp+i] + float64(gy[ym+i])*x[ym+i] +
					float64(gz[row+i])*x[zp+i] + float64(gz[zm+i])*x[zm+i]
				v /= m
				x[row+i] = v
				fx += f[row+i] * v
			}
		}
		if part != nil {
			part[z][0] += fx
		}
	}
}

// mgPass runs the fine-level multigrid pass op on the planes [z0, z1).
func (s *Solver) mgPass(op, z0, z1 int) {
	plane := s.box.NX * s.box.NY
	lo, hi := z0*plane, z1*plane
	switch op {
	case passMGSweep:
		if !s.mgFirst {
			s.fine.sweepList(&s.col[s.mgColour], s.z, s.r, z0, z1, s.part)
			return
		}
		s.fine.sweep(s.z, s.r, s.mgColour, s.mgFirst, z0, z1, s.part)
	case passMGResidual:
		if s.resColour >= 0 {
			s.fine.restrictList(&s.col[s.resColour], s.z, s.r, s.mg[0].f, z0, z1)
			return
		}
		s.fine.restrictResidual(s.z, s.r, s.agg, s.mg[0].f, s.resColour, z0, z1)
	case passMGProlong: // z += P (coarse x), on red only when the black half sweep that follows overwrites black
		cx := s.mg[0].x
		if s.resColour >= 0 {
			s.fine.prolongList(&s.col[0], s.z, cx, z0, z1)
			return
		}
		nx, ny := s.box.NX, s.box.NY
		for z := z0; z < z1; z++ {
			for y := range ny {
				row := nx * (y + ny*z)
				x0, step := 0, 1
				if s.resColour >= 0 {
					x0, step = (y+z)&1, 2
				}
				xr, ar := s.z[row:row+nx], s.agg[row : row+nx][:nx]
				for i := x0; i < nx; i += step {
					if I := ar[i]; I >= 0 {
						xr[i] += cx[I]
					}
				}
			}
		}
	case passMGDirection: // p = z + βp
		beta := s.beta
		p := s.p[lo:hi]
		for i, zi := range s.z[lo:hi][:len(p)] {
			p[i] = zi + beta*p[i]
		}
	}
}
