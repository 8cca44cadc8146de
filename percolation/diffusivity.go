package percolation

import (
	"fmt"
	"math"
	"runtime"
	"sync"

	"gelspace/kinetics"
)

// Solver defaults.
const (
	DefaultTol     = 1e-6  // relative residual at which conjugate gradients stop
	DefaultMaxIter = 20000 // iteration cap per axis
)

// Bounds on a conducting voxel's relative diffusivity; 0 is always allowed.
const (
	MinDiffusivity = 1e-12
	MaxDiffusivity = 1e12
)

// CSHRelDiffusivity is the relative diffusivity D/D0 of C-S-H (its gel
// pores) against bulk pore water, 1/400, from Garboczi & Bentz, J. Mater.
// Sci. 27 (1992) 2083.
const CSHRelDiffusivity = 1.0 / 400

// DefaultDiffusivities returns the default table of relative diffusivities
// D/D0 by phase id: 1 for every pore id (kinetics.IsPore), CSHRelDiffusivity for inner
// and outer C-S-H, and 0 (insulating) for every other phase.
func DefaultDiffusivities() [kinetics.NumIDs]float64 {
	var t [kinetics.NumIDs]float64
	for id := range kinetics.NumIDs {
		if kinetics.IsPore(kinetics.ID(id)) {
			t[id] = 1
		}
	}
	t[kinetics.CSHInner] = CSHRelDiffusivity
	t[kinetics.CSHOuter] = CSHRelDiffusivity
	return t
}

// DiffusivityOptions sets up a diffusivity solve. The zero value gives the
// defaults.
type DiffusivityOptions struct {
	// Table holds D/D0 of each phase id, each 0 or within
	// [MinDiffusivity, MaxDiffusivity]; nil means DefaultDiffusivities.
	// DiffusivityField ignores it.
	Table *[kinetics.NumIDs]float64

	// Tol is the relative residual ‖b − Ax‖₂/‖b‖₂ at which the solve of
	// one axis stops, within (0, 1); 0 means DefaultTol.
	Tol float64

	// MaxIter caps the iterations per axis, ≥ 0; 0 means DefaultMaxIter.
	MaxIter int

	// Workers is the number of goroutines, ≥ 0; 0 means GOMAXPROCS. The
	// result does not depend on it, bit for bit.
	Workers int
}

// Diffusion is the result of a diffusivity solve, per axis x, y, z.
type Diffusion struct {
	Rel       [3]float64 // D/D0, D0 the diffusivity of bulk pore water
	Formation [3]float64 // formation factor D0/D = 1/Rel; +Inf where Rel is 0
	Iter      [3]int     // conjugate-gradient iterations
	Residual  [3]float64 // relative residual reached (0 when no solve was needed)
	Conducts  [3]bool    // a conducting cluster spans the axis
}

// Diffusivity computes the relative diffusivity D/D0 of the voxel box along
// each axis, from the phase of each voxel and the table in opt; see the
// package doc for the discretisation and the boundary conditions. It panics
// if len(phase) does not match the box and returns an error for bad options
// or when an axis does not converge within opt.MaxIter, together with the
// estimates reached.
func Diffusivity(box Box, phase []uint8, opt DiffusivityOptions) (Diffusion, error) {
	var s Solver
	return s.Diffusivity(box, phase, opt)
}

// DiffusivityField is Diffusivity with the relative diffusivity of each
// voxel given directly in d (same layout as the box), each value 0 or within
// [MinDiffusivity, MaxDiffusivity].
func DiffusivityField(box Box, d []float64, opt DiffusivityOptions) (Diffusion, error) {
	var s Solver
	return s.DiffusivityField(box, d, opt)
}

// Solver holds the work arrays of the diffusivity solve so that repeated
// solves (a time series) allocate nothing once sized. The zero value is
// ready to use; a Solver is not safe for concurrent use.
type Solver struct {
	lab         Labeler
	in          []bool
	dbuf        []float64
	g           [3][]float32 // g[k][i]: conductance of the bond from i to its +k neighbour
	invd        []float32    // Jacobi preconditioner; 0 outside the active set
	r           []float64
	p           []float64
	q           []float64
	part        [][3]float64  // per z plane partial sums, added in plane order
	dg          []float64     // diagonal of A, for the coarse levels
	z           []float64     // multigrid: preconditioned residual
	fine        mgLevel       // multigrid: the fine level, on the arrays above
	mg          []gLevel      // multigrid coarse levels
	agg, uf     []int32       // multigrid: aggregate of each fine voxel; union–find scratch
	col         [2]colourList // multigrid: active fine voxels of each colour (proper colouring only)
	mgColour    int           // colour of the fine half sweep
	mgFirst     bool          // the fine half sweep starts from z = 0
	mgReverse   bool          // the fine half sweep runs in reverse order (improper colouring)
	resColour   int           // colour of the fine residual, or −1 for all voxels
	mvIn, mvOut []float64     // vectors of matvec
	jacobiOnly  bool          // tests: Jacobi preconditioner alone

	// set per pass
	op          int // passSetup, passMatvec, passUpdate, passDirection
	axisA       int
	cl          *Clusters
	alpha, beta float64

	// set per solve
	box     Box
	d       []float64
	workers int
	elec    int // axis with electrodes (a non-periodic gradient axis), or −1
}

// Diffusivity is the package-level Diffusivity on s's buffers.
func (s *Solver) Diffusivity(box Box, phase []uint8, opt DiffusivityOptions) (Diffusion, error) {
	box.mustFit(len(phase), "phase")
	table := DefaultDiffusivities()
	if opt.Table != nil {
		table = *opt.Table
		for id, v := range table {
			if !validDiffusivity(v) {
				return Diffusion{}, fmt.Errorf("percolation: diffusivity %g of phase id %d is outside the allowed range: 0 or %g to %g", v, id, MinDiffusivity, MaxDiffusivity)
			}
		}
	}
	s.dbuf = grow(s.dbuf, len(phase))
	for i, p := range phase {
		if kinetics.Lookup(p) == nil {
			x, y, z := box.Coords(i)
			return Diffusion{}, fmt.Errorf("percolation: value %d at voxel (%d, %d, %d) is not a phase id (see kinetics.Phases)", p, x, y, z)
		}
		s.dbuf[i] = table[p]
	}
	return s.solve(box, s.dbuf, opt)
}

// DiffusivityField is the package-level DiffusivityField on s's buffers.
func (s *Solver) DiffusivityField(box Box, d []float64, opt DiffusivityOptions) (Diffusion, error) {
	box.mustFit(len(d), "diffusivity field")
	for i, v := range d {
		if !validDiffusivity(v) {
			x, y, z := box.Coords(i)
			return Diffusion{}, fmt.Errorf("percolation: diffusivity %g at voxel (%d, %d, %d) is outside the allowed range: 0 or %g to %g", v, x, y, z, MinDiffusivity, MaxDiffusivity)
		}
	}
	return s.solve(box, d, opt)
}

func validDiffusivity(v float64) bool {
	return v == 0 || (v >= MinDiffusivity && v <= MaxDiffusivity)
}

func grow[T any](b []T, n int) []T {
	if cap(b) < n {
		return make([]T, n)
	}
	return b[:n]
}

func (s *Solver) solve(box Box, d []float64, opt DiffusivityOptions) (Diffusion, error) {
	tol, maxIter, workers := opt.Tol, opt.MaxIter, opt.Workers
	if tol == 0 {
		tol = DefaultTol
	}
	if !(tol > 0 && tol < 1) {
		return Diffusion{}, fmt.Errorf("percolation: tolerance %g is outside the allowed range (0, 1)", opt.Tol)
	}
	if maxIter == 0 {
		maxIter = DefaultMaxIter
	}
	if maxIter < 0 {
		return Diffusion{}, fmt.Errorf("percolation: MaxIter %d is outside the allowed range ≥ 0", opt.MaxIter)
	}
	if workers < 0 {
		return Diffusion{}, fmt.Errorf("percolation: Workers %d is outside the allowed range ≥ 0", opt.Workers)
	}
	if workers == 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	s.box, s.d, s.workers = box, d, min(workers, box.NZ)
	n := box.Len()

	// Conducting clusters: voxels with d > 0, joined where both are > 0,
	// which is where the harmonic-mean conductance is > 0.
	s.in = grow(s.in, n)
	for i, v := range d {
		s.in[i] = v > 0
	}
	cl := s.lab.Label(box, s.in)
	s.conductances()
	s.invd = grow(s.invd, n)
	s.dg = grow(s.dg, n)
	s.z = grow(s.z, n)
	s.r = grow(s.r, n)
	s.p = grow(s.p, n)
	s.q = grow(s.q, n)
	s.part = grow(s.part, box.NZ)

	var res Diffusion
	var err error
	for a := range 3 {
		active := false
		for _, sp := range cl.Spans {
			active = active || sp[a]
		}
		res.Conducts[a] = active
		if active {
			var e error
			res.Rel[a], res.Iter[a], res.Residual[a], e = s.axis(a, cl, tol, maxIter)
			if e != nil && err == nil {
				err = e
			}
		}
		res.Formation[a] = math.Inf(1)
		if res.Rel[a] > 0 {
			res.Formation[a] = 1 / res.Rel[a]
		}
	}
	return res, err
}

// conductances fills g with the harmonic means of face-neighbour
// diffusivities; a bond across an open face has conductance 0.
func (s *Solver) conductances() {
	box, d := s.box, s.d
	n := box.Len()
	nx, ny, nz := box.NX, box.NY, box.NZ
	for k := range 3 {
		s.g[k] = grow(s.g[k], n)
	}
	gx, gy, gz := s.g[0], s.g[1], s.g[2]
	plane := nx * ny
	for z := range nz {
		zp := z + 1
		openZ := false
		if zp == nz {
			zp, openZ = 0, !box.Periodic[2]
		}
		for y := range ny {
			yp := y + 1
			openY := false
			if yp == ny {
				yp, openY = 0, !box.Periodic[1]
			}
			row := nx * (y + ny*z)
			rowY := nx*yp + plane*z
			rowZ := nx*y + plane*zp
			for x := range nx {
				i := row + x
				xp := x + 1
				openX := false
				if xp == nx {
					xp, openX = 0, !box.Periodic[0]
				}
				gx[i] = hm(d[i], d[row+xp], openX)
				gy[i] = hm(d[i], d[rowY+x], openY)
				gz[i] = hm(d[i], d[rowZ+x], openZ)
			}
		}
	}
}

// hm is the harmonic mean 2ab/(a+b) of two diffusivities, the conductance of
// two half voxels in series; 0 when either is 0 or the bond is open.
func hm(a, b float64, open bool) float32 {
	if open || a == 0 || b == 0 {
		return 0
	}
	return float32(2 * a * b / (a + b))
}

// The passes of one iteration, run over z planes by parallel.
const (
	passSetup = iota
	passMatvec
	passUpdate
	passUpdateMG
	passDirection
	passMGSweep
	passMGResidual
	passMGProlong
	passMGDirection
)

// parallel runs pass op over contiguous ranges of z planes, one range per
// worker, and waits for all.
func (s *Solver) parallel(op int) { s.parallelRanges(op, false) }

// parallelEven is parallel with ranges that start at even planes (the
// last range takes what is left).
func (s *Solver) parallelEven(op int) { s.parallelRanges(op, true) }

// parallelRanges splits the z planes among the workers, at even planes
// when even is set, runs pass op on each range and waits for all.
func (s *Solver) parallelRanges(op int, even bool) {
	s.op = op
	nz, w := s.box.NZ, s.workers
	if w <= 1 {
		s.pass(0, nz)
		return
	}
	bound := func(k int) int {
		if k >= w {
			return nz
		}
		b := k * nz / w
		if even {
			b &^= 1
		}
		return b
	}
	var wg sync.WaitGroup
	for k := 1; k < w; k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s.pass(bound(k), bound(k+1))
		}()
	}
	s.pass(0, bound(1))
	wg.Wait()
}

func (s *Solver) pass(z0, z1 int) {
	switch s.op {
	case passSetup:
		s.setup(z0, z1)
	case passMatvec:
		s.matvec(z0, z1)
	case passUpdate:
		s.update(z0, z1)
	case passUpdateMG:
		s.updateMG(z0, z1)
	case passDirection:
		s.direction(z0, z1)
	default:
		s.mgPass(s.op, z0, z1)
	}
}

// sums adds the per-plane partial sums in plane order, so that the result
// does not depend on the number of workers.
func (s *Solver) sums() (a, b, c float64) {
	for _, p := range s.part {
		a += p[0]
		b += p[1]
		c += p[2]
	}
	return a, b, c
}

// axis solves for the fluctuation w with a unit gradient along axis a by
// preconditioned conjugate gradients (multigrid, or Jacobi on tiny boxes)
// from w = 0 and returns D/D0,
// the iterations and the relative residual reached.
//
// D/D0 is the dissipation E(w)/V of the potential u = w − x_a (see the
// package doc). With E(w) = wᵀAw − 2bᵀw + c0 and CG's steps α_k along p_k
// with ρ_k = r_k·M⁻¹r_k, each step lowers E by exactly α_k ρ_k, so
//
//	E(w_k) = c0 − Σ_{j<k} α_j ρ_j,
//
// an upper bound that falls to the true dissipation as CG converges; the
// iterate w itself is never stored.
func (s *Solver) axis(a int, cl *Clusters, tol float64, maxIter int) (float64, int, float64, error) {
	s.elec = -1
	if !s.box.Periodic[a] {
		s.elec = a
	}
	s.axisA, s.cl = a, cl
	s.parallel(passSetup)
	rho, bb, c0 := s.sums()
	s.mvIn, s.mvOut = s.p, s.q
	s.mg = s.mg[:0]
	if !s.jacobiOnly {
		s.mgBuild()
	}
	useMG := len(s.mg) > 0
	if useMG && bb > 0 {
		rho = s.mgPrecond(false)
		copy(s.p, s.z)
	}
	e := c0
	var iter int
	var rel float64
	var err error
	if bb > 0 {
		bnorm := math.Sqrt(bb)
		rel = 1
		for {
			if iter >= maxIter {
				err = fmt.Errorf("percolation: diffusivity along %s: relative residual %.3g after %d iterations, above the tolerance %g (raise MaxIter)", axisNames[a], rel, iter, tol)
				break
			}
			s.parallel(passMatvec)
			pq, _, _ := s.sums()
			iter++
			if !(pq > 0) {
				break // p vanishes on the active set: nothing left to solve
			}
			s.alpha = rho / pq
			e -= s.alpha * rho
			if useMG && s.fine.coloured() {
				s.parallel(passUpdateMG)
			} else {
				s.parallel(passUpdate)
			}
			rz, rr, _ := s.sums()
			rel = math.Sqrt(rr) / bnorm
			if rel <= tol {
				break
			}
			if useMG {
				rz = s.mgPrecond(s.fine.coloured())
				s.beta = rz / rho
				rho = rz
				s.parallel(passMGDirection)
				continue
			}
			s.beta = rz / rho
			rho = rz
			s.parallel(passDirection)
		}
	}
	return max(e, 0) / float64(s.box.Len()), iter, rel, err
}

// rowOffsets returns the offsets of the row (y, z) and of the rows at y−1,
// y+1 (same plane) and z−1, z+1 (same y), wrapping; bonds across open faces
// have g = 0, so wrapping there is harmless.
func (s *Solver) rowOffsets(y, z int) (row, ym, yp, zm, zp int) {
	nx, ny, nz := s.box.NX, s.box.NY, s.box.NZ
	plane := nx * ny
	row = nx * (y + ny*z)
	y0, y1 := y-1, y+1
	if y0 < 0 {
		y0 = ny - 1
	}
	if y1 == ny {
		y1 = 0
	}
	z0, z1 := z-1, z+1
	if z0 < 0 {
		z0 = nz - 1
	}
	if z1 == nz {
		z1 = 0
	}
	return row, nx*y0 + plane*z, nx*y1 + plane*z, nx*y + plane*z0, nx*y + plane*z1
}

// onFace reports whether row (y, z) holds voxels on the electrode faces
// of an open gradient axis.
func (s *Solver) onFace(y, z int) bool {
	switch s.elec {
	case 0:
		return true
	case 1:
		return y == 0 || y == s.box.NY-1
	case 2:
		return z == 0 || z == s.box.NZ-1
	}
	return false
}

// electrode returns, for voxel i at c on an electrode face, the
// conductance 2d of the half voxel to the electrode times the number of
// electrodes it touches (2 on an axis one voxel long), and its source
// term d·(low − high).
func (s *Solver) electrode(i int, c [3]int) (g, src float64) {
	a := s.elec
	n := s.box.dims()[a]
	di := s.d[i]
	if c[a] == 0 {
		g += 2 * di
		src += di
	}
	if c[a] == n-1 {
		g += 2 * di
		src -= di
	}
	return g, src
}

// setup fills, on the planes [z0, z1), the preconditioner (0 off the active
// set), the right-hand side r = b and p = M⁻¹r, with part = (r·M⁻¹r, r·r,
// c0) per plane, c0 being the dissipation at w = 0.
func (s *Solver) setup(z0, z1 int) {
	a, cl := s.axisA, s.cl
	nx, ny := s.box.NX, s.box.NY
	gx, gy, gz := s.g[0], s.g[1], s.g[2]
	ga := s.g[a]
	for z := z0; z < z1; z++ {
		var rz, rr, c0 float64
		for y := range ny {
			row, ym, _, zm, _ := s.rowOffsets(y, z)
			back := [3]int{0, ym, zm} // rows of the −a neighbours for a = 1, 2
			face := s.onFace(y, z)
			for x := range nx {
				i := row + x
				xm := x - 1
				if x == 0 {
					xm = nx - 1
				}
				c := cl.Label[i]
				if c < 0 || !cl.Spans[c][a] {
					s.invd[i], s.dg[i], s.r[i], s.p[i] = 0, 0, 0, 0
					continue
				}
				diag := float64(gx[i]) + float64(gx[row+xm]) + float64(gy[i]) + float64(gy[ym+x]) + float64(gz[i]) + float64(gz[zm+x])
				gm := float64(gx[row+xm])
				if a > 0 {
					gm = float64(ga[back[a]+x])
				}
				b := gm - float64(ga[i])
				c0 += float64(ga[i])
				if face {
					ge, src := s.electrode(i, [3]int{x, y, z})
					diag += ge
					b += src
					c0 += ge / 4 // each link 2d·(1/2)²
				}
				var m float32
				if diag > 0 {
					m = float32(1 / diag)
				}
				s.invd[i] = m
				s.dg[i] = diag
				s.r[i] = b
				s.p[i] = float64(m) * b
				rz += float64(m) * b * b
				rr += b * b
			}
		}
		s.part[z] = [3]float64{rz, rr, c0}
	}
}

// matvec computes q = A p on the planes [z0, z1), with part = (p·q, 0, 0):
//
//	(A p)_i = Σ_j g_ij (p_i − p_j)
//
// over the six bonds, plus the electrode conductance times p_i on the
// faces of an open gradient axis. It walks the bonds to the +x, +y, +z
// neighbours once each, adding the flux to one end and taking it from the
// other. The bonds from plane z0−1 to z0 belong to the previous range: they
// are computed again here, for plane z0 only, so that no two goroutines
// write one plane, and every q_i receives its terms in the same order
// whatever the ranges.
func (s *Solver) matvec(z0, z1 int) {
	nx, ny, nz := s.box.NX, s.box.NY, s.box.NZ
	plane := nx * ny
	gx, gy, gz := s.g[0], s.g[1], s.g[2]
	p, q := s.mvIn, s.mvOut
	{
		// Plane z0: clear it and take the bonds from plane z0−1.
		zm := z0 - 1
		if zm < 0 {
			zm = nz - 1
		}
		lo := z0 * plane
		qz, pz := q[lo:lo+plane], p[lo:lo+plane]
		pm, gm := p[zm*plane:][:len(pz)], gz[zm*plane:][:len(pz)]
		qz = qz[:len(pz)]
		for i, pi := range pz {
			qz[i] = float64(gm[i]) * (pi - pm[i])
		}
	}
	for z := z0; z < z1; z++ {
		lo := z * plane
		zp := z + 1
		last := zp == z1
		if zp == nz {
			zp = 0
		}
		if !last {
			clear(q[zp*plane : zp*plane+plane])
		}
		for y := range ny {
			row := lo + nx*y
			yp := y + 1
			if yp == ny {
				yp = 0
			}
			rowY := lo + nx*yp
			rowZ := zp*plane + nx*y
			pr := p[row : row+nx]
			n := len(pr)
			qr := q[row : row+nx][:n]
			gxr, gyr, gzr := gx[row : row+nx][:n], gy[row : row+nx][:n], gz[row : row+nx][:n]
			py, qy := p[rowY : rowY+nx][:n], q[rowY : rowY+nx][:n]
			pz, qz := p[rowZ : rowZ+nx][:n], q[rowZ : rowZ+nx][:n]
			var carry float64 // flux from the −x bond into the voxel
			for x := 0; x < n-1; x++ {
				pi := pr[x]
				fx := float64(gxr[x]) * (pi - pr[x+1])
				fy := float64(gyr[x]) * (pi - py[x])
				fz := float64(gzr[x]) * (pi - pz[x])
				qr[x] += carry + fx + fy + fz
				carry = -fx
				qy[x] -= fy
				if !last {
					qz[x] -= fz
				}
			}
			{
				x := n - 1
				pi := pr[x]
				fx := float64(gxr[x]) * (pi - pr[0])
				fy := float64(gyr[x]) * (pi - py[x])
				fz := float64(gzr[x]) * (pi - pz[x])
				if n == 1 {
					carry = -fx
				}
				qr[x] += carry + fx + fy + fz
				qr[0] -= fx
				qy[x] -= fy
				if !last {
					qz[x] -= fz
				}
			}
			if s.onFace(y, z) {
				for x, pi := range pr {
					if pi != 0 {
						ge, _ := s.electrode(row+x, [3]int{x, y, z})
						qr[x] += ge * pi
					}
				}
			}
		}
		var pq float64
		pz, qz := p[lo:lo+plane], q[lo:lo+plane]
		qz = qz[:len(pz)]
		for i, pi := range pz {
			pq += pi * qz[i]
		}
		s.part[z] = [3]float64{pq, 0, 0}
	}
}

// update does r −= αq on the planes [z0, z1), with part = (r·M⁻¹r, r·r, 0).
func (s *Solver) update(z0, z1 int) {
	plane := s.box.NX * s.box.NY
	alpha := s.alpha
	for z := z0; z < z1; z++ {
		lo, hi := z*plane, (z+1)*plane
		r, q, m := s.r[lo:hi], s.q[lo:hi], s.invd[lo:hi]
		q, m = q[:len(r)], m[:len(r)]
		var rz, rr float64
		for i, ri := range r {
			ri -= alpha * q[i]
			r[i] = ri
			rr += ri * ri
			rz += float64(m[i]) * ri * ri
		}
		s.part[z] = [3]float64{rz, rr, 0}
	}
}

// updateMG does r −= αq on the planes [z0, z1), with part = (0, r·r, 0),
// and starts the multigrid pre-smoothing: z = D⁻¹r on red, 0 on black
// (the first half sweep from z = 0).
func (s *Solver) updateMG(z0, z1 int) {
	nx, ny := s.box.NX, s.box.NY
	alpha := s.alpha
	for z := z0; z < z1; z++ {
		var rr float64
		for y := range ny {
			lo := nx * (y + ny*z)
			r := s.r[lo : lo+nx]
			q, d, x := s.q[lo : lo+nx][:len(r)], s.dg[lo : lo+nx][:len(r)], s.z[lo : lo+nx][:len(r)]
			red := (y + z) & 1
			for i, ri := range r {
				ri -= alpha * q[i]
				r[i] = ri
				rr += ri * ri
				var v float64
				if i&1 == red && d[i] != 0 {
					v = ri / d[i]
				}
				x[i] = v
			}
		}
		s.part[z] = [3]float64{0, rr, 0}
	}
}

// direction does p = M⁻¹r + βp on the planes [z0, z1).
func (s *Solver) direction(z0, z1 int) {
	plane := s.box.NX * s.box.NY
	beta := s.beta
	for z := z0; z < z1; z++ {
		lo, hi := z*plane, (z+1)*plane
		r, p, m := s.r[lo:hi], s.p[lo:hi], s.invd[lo:hi]
		r, m = r[:len(p)], m[:len(p)]
		for i, pi := range p {
			p[i] = float64(m[i])*r[i] + beta*pi
		}
	}
}
