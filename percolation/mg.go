package percolation

// The preconditioner of the diffusivity solve is one V-cycle of
// aggregation multigrid. Level 0 is the voxel network restricted to the
// active set; each coarser level merges 2×2×2 blocks of the level below (1
// wide at an odd end). With piecewise-constant interpolation P the Galerkin
// operator Pᵀ A P is again a conductance network on the blocks: the bond
// between two blocks is the sum of the finer conductances between them, and
// the diagonal is the sum of the finer diagonals less twice the bonds
// inside the block.
//
// Every level smooths with red–black Gauss–Seidel, the colour of a voxel
// being the parity of x + y + z: before the coarse correction it updates
// the red voxels and then the black ones, after it the black and then the
// red ones, so that the sequence of half sweeps of the whole cycle is a
// palindrome and the cycle a symmetric positive definite operator. On an
// odd periodic edge two voxels of one colour meet across the face; the half
// sweep then runs in a fixed order over the whole level (one worker), so
// that the result never depends on the number of workers. The coarsest
// level (at most mgCoarsestLen blocks) is smoothed by mgCoarseSweeps
// red–black pairs, again in palindromic order. Boxes of at most
// mgCoarsestLen voxels use the Jacobi diagonal alone.

type mgLevel struct {
	nx, ny, nz int
	g          [3][]float32 // bond i → i+k, wrapped; 0 across open faces and off the active set
	diag       []float64    // diagonal of A, electrode links included
	invd       []float32    // 1/diag, 0 where diag is 0 (off the active set)
	f, x       []float64    // right-hand side, iterate
}

// Multigrid parameters: red–black Gauss–Seidel pairs before and after the
// coarse correction on the fine level and on the coarse levels, pairs on the
// coarsest level, and the size of the coarsest level.
const (
	mgFineSweeps   = 1
	mgSweeps       = 2
	mgCoarseSweeps = 8
	mgCoarsestLen  = 512
)

func (lv *mgLevel) len() int { return lv.nx * lv.ny * lv.nz }

func (lv *mgLevel) resize(nx, ny, nz int) {
	lv.nx, lv.ny, lv.nz = nx, ny, nz
	n := nx * ny * nz
	for k := range 3 {
		lv.g[k] = grow(lv.g[k], n)
	}
	lv.diag = grow(lv.diag, n)
	lv.invd = grow(lv.invd, n)
	lv.f = grow(lv.f, n)
	lv.x = grow(lv.x, n)
}

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
//	x_i = (f_i + Σ_j g_ij x_j) / A_ii,
//
// or, when first, sets x = D⁻¹f on colour c and x = 0 on the other colour
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
			fr, mr := f[row : row+nx][:n], lv.invd[row : row+nx][:n]
			if first {
				for i := range xr {
					xr[i] = 0
				}
				for i := x0; i < n; i += 2 {
					v := float64(mr[i]) * fr[i]
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
				if ip == n {
					ip = 0
				}
				if im < 0 {
					im = n - 1
				}
				v := fr[i] + float64(gxr[i])*xr[ip] + float64(gxr[im])*xr[im] +
					float64(gyr[i])*xyp[i] + float64(gym[i])*xym[i] +
					float64(gzr[i])*xzp[i] + float64(gzm[i])*xzm[i]
				v *= float64(m)
				xr[i] = v
				fx += fr[i] * v
			}
		}
		if part != nil {
			part[z][0] += fx
		}
	}
}

// restrict sets the coarse right-hand side cf = Pᵀ (f − A x) on the coarse
// planes whose first fine plane lies in [z0, z1); each coarse plane is
// summed by one caller in a fixed order.
func (lv *mgLevel) restrict(x, f []float64, c *mgLevel, z0, z1 int) {
	nx := lv.nx
	cx, cy := c.nx, c.ny
	gx, gy, gz := lv.g[0], lv.g[1], lv.g[2]
	for Z := (z0 + 1) / 2; 2*Z < z1; Z++ {
		cf := c.f[cx*cy*Z:][:cx*cy]
		clear(cf)
		for z := 2 * Z; z < min(2*Z+2, lv.nz); z++ {
			for y := range lv.ny {
				row, ym, yp, zm, zp := lv.offsets(y, z)
				cr := cf[cx*(y>>1):][:cx]
				xr := x[row : row+nx]
				n := len(xr)
				fr, dr := f[row : row+nx][:n], lv.diag[row : row+nx][:n]
				xym, xyp := x[ym : ym+nx][:n], x[yp : yp+nx][:n]
				xzm, xzp := x[zm : zm+nx][:n], x[zp : zp+nx][:n]
				gxr := gx[row : row+nx][:n]
				gyr, gym := gy[row : row+nx][:n], gy[ym : ym+nx][:n]
				gzr, gzm := gz[row : row+nx][:n], gz[zm : zm+nx][:n]
				for i := range xr {
					if dr[i] == 0 {
						continue
					}
					ip, im := i+1, i-1
					if ip == n {
						ip = 0
					}
					if im < 0 {
						im = n - 1
					}
					v := fr[i] - dr[i]*xr[i] + float64(gxr[i])*xr[ip] + float64(gxr[im])*xr[im] +
						float64(gyr[i])*xyp[i] + float64(gym[i])*xym[i] +
						float64(gzr[i])*xzp[i] + float64(gzm[i])*xzm[i]
					cr[i>>1] += v
				}
			}
		}
	}
}

// prolong adds the coarse correction, x += P (c.x), on the active voxels of
// the planes [z0, z1).
func (lv *mgLevel) prolong(x []float64, c *mgLevel, z0, z1 int) {
	nx := lv.nx
	cx, cy := c.nx, c.ny
	for z := z0; z < z1; z++ {
		for y := range lv.ny {
			row := nx * (y + lv.ny*z)
			cr := c.x[cx*(y>>1+cy*(z>>1)):][:cx]
			xr, mr := x[row:row+nx], lv.invd[row : row+nx][:nx]
			for i := range xr {
				if mr[i] != 0 {
					xr[i] += cr[i>>1]
				}
			}
		}
	}
}

// coarsen builds level c from level l, leaving out the voxels of l whose
// invd is 0 (off the active set).
func (c *mgLevel) coarsen(l *mgLevel) {
	cx, cy, cz := (l.nx+1)/2, (l.ny+1)/2, (l.nz+1)/2
	c.resize(cx, cy, cz)
	for k := range 3 {
		clear(c.g[k])
	}
	clear(c.diag)
	nx, ny, nz := l.nx, l.ny, l.nz
	dims := [3]int{nx, ny, nz}
	for z := range nz {
		for y := range ny {
			for x := range nx {
				i := x + nx*(y+ny*z)
				if l.invd[i] == 0 {
					continue
				}
				I := x/2 + cx*(y/2+cy*(z/2))
				c.diag[I] += l.diag[i]
				nb := [3][3]int{{x + 1, y, z}, {x, y + 1, z}, {x, y, z + 1}}
				for k := range 3 {
					g := l.g[k][i]
					if g == 0 {
						continue
					}
					q := nb[k]
					if q[k] == dims[k] {
						q[k] = 0
					}
					J := q[0]/2 + cx*(q[1]/2+cy*(q[2]/2))
					if J == I {
						c.diag[I] -= 2 * float64(g)
					} else {
						c.g[k][I] += g
					}
				}
			}
		}
	}
	for I, d := range c.diag {
		c.invd[I] = 0
		if d > 1e-300 {
			c.invd[I] = float32(1 / d)
		}
	}
}

// smooth runs the half sweeps of a palindrome of pairs red–black pairs from
// x = 0 when first (red, black, red, ...) or, after the coarse correction,
// (black, red, black, ...), on a coarse level, serially.
func (lv *mgLevel) smooth(pairs int, pre bool) {
	x, f := lv.x[:lv.len()], lv.f[:lv.len()]
	c0 := 0
	if !pre {
		c0 = 1
	}
	for k := range 2 * pairs {
		lv.sweep(x, f, (c0+k)&1, pre && k == 0, 0, lv.nz, nil)
	}
}

// vcycle sets x ≈ A⁻¹ f on coarse level k (s.mg[k]) and below.
func (s *Solver) vcycle(k int) {
	lv := &s.mg[k]
	if k == len(s.mg)-1 {
		// Red first from 0, then black, red, ..., red: a palindrome.
		x, f := lv.x[:lv.len()], lv.f[:lv.len()]
		for j := range 2*mgCoarseSweeps + 1 {
			lv.sweep(x, f, j&1, j == 0, 0, lv.nz, nil)
		}
		return
	}
	lv.smooth(mgSweeps, true)
	c := &s.mg[k+1]
	lv.restrict(lv.x, lv.f, c, 0, lv.nz)
	s.vcycle(k + 1)
	lv.prolong(lv.x, c, 0, lv.nz)
	lv.smooth(mgSweeps, false)
}

// mgBuild builds the coarse levels for the current axis from the fine
// network, masked to the active set, and the fine diagonal s.dg.
func (s *Solver) mgBuild() {
	s.mg = s.mg[:0]
	s.fine = mgLevel{nx: s.box.NX, ny: s.box.NY, nz: s.box.NZ, g: s.g, diag: s.dg, invd: s.invd, f: s.r, x: s.z}
	if s.fine.len() <= mgCoarsestLen {
		return
	}
	prev := &s.fine
	for {
		if len(s.mg) < cap(s.mg) {
			s.mg = s.mg[:len(s.mg)+1]
		} else {
			s.mg = append(s.mg, mgLevel{})
		}
		c := &s.mg[len(s.mg)-1]
		c.coarsen(prev)
		if c.len() <= mgCoarsestLen || (c.nx == 1 && c.ny == 1 && c.nz == 1) {
			return
		}
		prev = c
	}
}

// mgPrecond computes z = M r by one V-cycle from the fine level and returns
// r·z. z is 0 off the active set. The fine-level passes run over z planes
// with per-plane sums, like the rest of the solve; the half sweeps run on
// one worker when the colouring is not proper (see above).
func (s *Solver) mgPrecond() float64 {
	clear(s.part)
	for k := range 2 * mgFineSweeps {
		s.mgColour, s.mgFirst = k&1, k == 0
		s.sweepPass()
	}
	s.parallel(passMGRestrict)
	s.vcycle(0)
	s.parallel(passMGProlong)
	clear(s.part)
	for k := range 2 * mgFineSweeps {
		s.mgColour, s.mgFirst = (k+1)&1, false
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
	s.fine.sweep(s.z, s.r, s.mgColour, s.mgFirst, 0, s.box.NZ, s.part)
}

// mgPass runs the fine-level multigrid pass op on the planes [z0, z1).
func (s *Solver) mgPass(op, z0, z1 int) {
	switch op {
	case passMGSweep:
		s.fine.sweep(s.z, s.r, s.mgColour, s.mgFirst, z0, z1, s.part)
	case passMGRestrict:
		s.fine.restrict(s.z, s.r, &s.mg[0], z0, z1)
	case passMGProlong:
		s.fine.prolong(s.z, &s.mg[0], z0, z1)
	case passMGDirection: // p = z + βp
		plane := s.box.NX * s.box.NY
		lo, hi := z0*plane, z1*plane
		beta := s.beta
		p := s.p[lo:hi]
		for i, zi := range s.z[lo:hi][:len(p)] {
			p[i] = zi + beta*p[i]
		}
	}
}
