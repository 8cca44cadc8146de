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
	FloorTol       = 1e-7  // smallest tolerance used: the floor of single-precision vectors
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
// D/D0 by phase id: 1 for every pore id (kinetics.IsPore), CSHRelDiffusivity for inner,
// outer and pozzolanic C-S-H, and 0 (insulating) for every other phase.
func DefaultDiffusivities() [kinetics.NumIDs]float64 {
	var t [kinetics.NumIDs]float64
	for id := range kinetics.NumIDs {
		if kinetics.IsPore(kinetics.ID(id)) {
			t[id] = 1
		}
	}
	t[kinetics.CSHInner] = CSHRelDiffusivity
	t[kinetics.CSHOuter] = CSHRelDiffusivity
	// The low-Ca C-S-H of the SCM reactions is taken to conduct as the
	// clinker's C-S-H (an assumption: no separate figure is used).
	t[kinetics.CSHLowCa] = CSHRelDiffusivity
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
	// one axis stops, within (0, 1); 0 means DefaultTol. A tolerance below
	// FloorTol is raised to it: the vectors are stored in single precision,
	// which bounds the residual reachable to about that, while D/D0, second
	// order in the error of the solution, is then exact to about 1e-12.
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

// MaxFieldValues is the number of distinct nonzero diffusivities that
// DiffusivityField accepts: each voxel's value is stored as a one-byte class.
const MaxFieldValues = 254

// Solver holds the work arrays of the diffusivity solve so that repeated
// solves (a time series) reuse them once sized; only the multigrid's build
// scratch is allocated anew per solve and dropped after the build. The
// zero value is ready to use; a Solver is not safe for concurrent use.
//
// Memory: per voxel of the box, four float32 vectors (the fluctuation w,
// the residual r, the search direction p and the preconditioned residual
// z, which also holds A p), a byte coding the smoother's inverse diagonal
// (see encodeDiag), a byte of the axes spanned by each voxel's conducting
// cluster and its aggregate on the first coarse level, and an int32 per
// 2×2×2 block, 18.5 bytes, plus the coarse levels (the first about a third
// of the active voxels on a hydrated paste, where strength of connection
// splits pore from C-S-H; each further one a third to a half of the one
// above). The labelling of the conducting clusters is read into the axes
// byte and its buffers let go before the vectors are sized. Conductances
// are not stored: each bond's is looked up from the classes (phase ids) of
// its two voxels.
type Solver struct {
	// Labeler, when not nil, labels the conducting clusters in place of
	// the solver's own, so that a caller that labels too (connectivity at
	// each age) holds one set of labelling buffers. The solve lets go of
	// its buffers (Labeler.Release), so its last result is lost.
	Labeler *Labeler

	lab  Labeler
	fcls []uint8 // classes of a DiffusivityField solve

	// The model: the class of each voxel (phase ids, or the classes of a
	// field), D/D0 per class and the conductance of a bond between two
	// classes, gt[ci<<8 | cj]. Class sentinel (255) is insulating, seen
	// across open faces.
	cls  []uint8
	dtab []float64
	gt   *[1 << 16]float32
	ins  []uint8 // a row of the sentinel class

	w, r, p, z []float32
	dcode      []uint8      // per voxel: the code in dinv of 1/A_ii (the smoother's diagonal, see encodeDiag)
	dinv       [256]float32 // 1/A_ii by code: 0 (code 0) off the active set, dEscape recomputed
	maxCodes   int          // tests: fewer codes than dEscape−1, so that escapes are exercised
	part       [][3]float64 // per z plane partial sums, added in plane order
	rows       [][2][]float64
	rows32     [][]float32 // per worker, a row of single-precision scratch
	act        []uint8     // per voxel: bit a set when its cluster spans axis a; the aggregate code (see fineAggregates) in bits 3–6
	bfirst     []int32     // per 2×2×2 block of the box: its first aggregate on coarse level 0
	spans      [][3]bool   // per conducting cluster: the axes it spans
	mg         []gLevel    // multigrid coarse levels
	stack      []int32     // aggregation scratch
	cuf        []int32     // union–find scratch of the coarse levels
	hierOK     bool        // the levels in mg were built in this solve
	hierElec   int         // electrode axis of the levels in mg
	hierAct    []bool      // per cluster: active in the levels in mg
	jacobiOnly bool        // tests: Jacobi preconditioner alone

	// set per pass
	op          int
	mgColour    int  // colour of the fine half sweep
	mgFirst     bool // the half sweep starts from x = 0
	mgReverse   bool // the half sweep runs in reverse raster order
	resColour   int  // colour of the fine residual, or −1 for all voxels
	mvIn, mvOut []float32
	alpha, beta float64

	// set per axis
	axisA int
	elec  int  // axis with electrodes (a non-periodic gradient axis), or −1
	useMG bool // the hierarchy is built

	// set per solve
	box     Box
	workers int
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
	for i, p := range phase {
		if kinetics.Lookup(p) == nil {
			x, y, z := box.Coords(i)
			return Diffusion{}, fmt.Errorf("percolation: value %d at voxel (%d, %d, %d) is not a phase id (see kinetics.Phases)", p, x, y, z)
		}
	}
	s.setTable(table[:])
	s.cls = phase
	return s.solve(box, opt)
}

// DiffusivityField is the package-level DiffusivityField on s's buffers.
// It returns an error when d holds more than MaxFieldValues distinct
// nonzero values.
func (s *Solver) DiffusivityField(box Box, d []float64, opt DiffusivityOptions) (Diffusion, error) {
	box.mustFit(len(d), "diffusivity field")
	for i, v := range d {
		if !validDiffusivity(v) {
			x, y, z := box.Coords(i)
			return Diffusion{}, fmt.Errorf("percolation: diffusivity %g at voxel (%d, %d, %d) is outside the allowed range: 0 or %g to %g", v, x, y, z, MinDiffusivity, MaxDiffusivity)
		}
	}
	// Classes in order of first occurrence, class 0 insulating.
	vals := []float64{0}
	class := map[float64]uint8{0: 0}
	s.fcls = grow(s.fcls, len(d))
	for i, v := range d {
		c, ok := class[v]
		if !ok {
			if len(vals) > MaxFieldValues {
				return Diffusion{}, fmt.Errorf("percolation: diffusivity field has more than %d distinct nonzero values", MaxFieldValues)
			}
			c = uint8(len(vals))
			class[v] = c
			vals = append(vals, v)
		}
		s.fcls[i] = c
	}
	s.setTable(vals)
	s.cls = s.fcls
	return s.solve(box, opt)
}

// sentinel is the class of no voxel, insulating, that stands for the
// neighbour across an open face.
const sentinel = 255

// setTable sets the classes' diffusivities and the bond conductance table.
func (s *Solver) setTable(d []float64) {
	if s.gt == nil {
		s.gt = new([1 << 16]float32)
	}
	s.dtab = grow(s.dtab, 256)
	clear(s.dtab)
	copy(s.dtab, d)
	for i := range len(d) {
		for j := range len(d) {
			s.gt[i<<8|j] = hm(s.dtab[i], s.dtab[j])
		}
		s.gt[i<<8|sentinel], s.gt[sentinel<<8|i] = 0, 0
	}
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

// hm is the harmonic mean 2ab/(a+b) of two diffusivities, the conductance of
// two half voxels in series, rounded to single precision; 0 when either is 0.
func hm(a, b float64) float32 {
	if a == 0 || b == 0 {
		return 0
	}
	return float32(2 * a * b / (a + b))
}

func (s *Solver) solve(box Box, opt DiffusivityOptions) (Diffusion, error) {
	tol, maxIter, workers := opt.Tol, opt.MaxIter, opt.Workers
	if tol == 0 {
		tol = DefaultTol
	}
	if !(tol > 0 && tol < 1) {
		return Diffusion{}, fmt.Errorf("percolation: tolerance %g is outside the allowed range (0, 1)", opt.Tol)
	}
	tol = max(tol, FloorTol)
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
	s.box, s.workers = box, min(workers, box.NZ)
	n := box.Len()

	// Conducting clusters: voxels with d > 0, joined where both are > 0,
	// which is where the harmonic-mean conductance is > 0.
	lab := s.Labeler
	if lab == nil {
		lab = &s.lab
	}
	in := lab.set(n)
	for i, c := range s.cls {
		in[i] = s.dtab[c] > 0
	}
	cl := lab.Label(box, in)
	// The axes each voxel's cluster spans; the labels themselves are not
	// needed past this point, and the labeler's buffers are let go before
	// the solver's vectors are sized.
	s.act = grow(s.act, n)
	for i, l := range cl.Label {
		var m uint8
		if l >= 0 {
			sp := cl.Spans[l]
			for a := range 3 {
				if sp[a] {
					m |= 1 << a
				}
			}
		}
		s.act[i] = m
	}
	s.spans = append(s.spans[:0], cl.Spans...)
	lab.Release()
	s.ins = grow(s.ins, box.NX)
	for i := range s.ins {
		s.ins[i] = sentinel
	}
	s.part = grow(s.part, box.NZ)
	if len(s.rows) < s.workers {
		s.rows = make([][2][]float64, s.workers)
	}
	if len(s.rows32) < s.workers {
		s.rows32 = make([][]float32, s.workers)
	}
	for k := range s.rows {
		for j := range 2 {
			s.rows[k][j] = grow(s.rows[k][j], box.NX)
		}
		s.rows32[k] = grow(s.rows32[k], box.NX)
	}

	var res Diffusion
	var err error
	built := false
	for a := range 3 {
		active := false
		for _, sp := range s.spans {
			active = active || sp[a]
		}
		res.Conducts[a] = active
		if active {
			if !built {
				built = true
				s.hierOK = false
			}
			var e error
			res.Rel[a], res.Iter[a], res.Residual[a], e = s.axis(a, tol, maxIter)
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

// The passes of one iteration, run over z planes by parallel.
const (
	passSetup = iota
	passMatvec
	passUpdate
	passDirection
	passEnergy
	passJacobi
	passMGSweep
	passMGResidual
	passMGProlong
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
		s.pass(0, 0, nz)
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
			s.pass(k, bound(k), bound(k+1))
		}()
	}
	s.pass(0, 0, bound(1))
	wg.Wait()
}

// pass runs s.op on the planes [z0, z1) as worker k.
func (s *Solver) pass(k, z0, z1 int) {
	sum, dg := s.rows[k][0], s.rows[k][1]
	switch s.op {
	case passSetup:
		s.setup(z0, z1, sum, dg)
	case passMatvec:
		s.matvec(z0, z1)
	case passUpdate:
		s.update(z0, z1)
	case passDirection:
		s.direction(z0, z1)
	case passEnergy:
		s.energy(z0, z1, sum, dg)
	case passJacobi:
		s.jacobi(z0, z1)
	default:
		s.mgPass(s.op, k, z0, z1)
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
// from w = 0 and returns D/D0, the iterations and the relative residual
// reached.
//
// D/D0 is the dissipation E(w)/V of the potential u = w − x_a (see the
// package doc), evaluated from the final iterate as
//
//	E(w) = c0 − 2 bᵀw + wᵀAw,
//
// c0 being the dissipation at w = 0; it is exact for the stored w (to
// double-precision sums), whatever the rounding of the single-precision
// vectors along the way, and exceeds the true dissipation by (w − w*)ᵀA(w − w*),
// second order in the error of w.
func (s *Solver) axis(a int, tol float64, maxIter int) (float64, int, float64, error) {
	s.elec = -1
	if !s.box.Periodic[a] {
		s.elec = a
	}
	s.axisA = a
	s.mgBuild()
	// The vectors after the levels: the build's scratch is garbage by now.
	for _, v := range [4]*[]float32{&s.w, &s.r, &s.p, &s.z} {
		*v = grow(*v, s.box.Len())
	}
	s.dcode = grow(s.dcode, s.box.Len())
	s.parallel(passSetup)
	s.encodeDiag()
	_, bb, c0 := s.sums()
	var iter int
	var rel float64
	var err error
	if bb > 0 {
		rho := s.precond(false)
		copy(s.p, s.z)
		bnorm := math.Sqrt(bb)
		rel = 1
		for {
			if iter >= maxIter {
				err = fmt.Errorf("percolation: diffusivity along %s: relative residual %.3g after %d iterations, above the tolerance %g (raise MaxIter)", axisNames[a], rel, iter, tol)
				break
			}
			s.mvIn, s.mvOut = s.p, s.z // z holds q = A p until the preconditioner overwrites it
			s.parallel(passMatvec)
			pq, _, _ := s.sums()
			iter++
			if !(pq > 0) {
				break // p vanishes on the active set: nothing left to solve
			}
			s.alpha = rho / pq
			s.parallel(passUpdate)
			_, rr, _ := s.sums()
			rel = math.Sqrt(rr) / bnorm
			if rel <= tol {
				break
			}
			rz := s.precond(true)
			s.beta = rz / rho
			rho = rz
			s.parallel(passDirection)
		}
	}
	var e float64
	if bb > 0 {
		s.mvIn = s.w
		s.parallel(passEnergy)
		e, _, _ = s.sums()
	}
	return max(c0+e, 0) / float64(s.box.Len()), iter, rel, err
}

// precond sets z = M r and returns r·z; started says that the update pass
// did the first step already (see update).
func (s *Solver) precond(started bool) float64 {
	if s.useMG {
		return s.mgPrecond(started && s.coloured())
	}
	if !started {
		s.parallel(passJacobi)
	}
	rz, _, _ := s.sums()
	return rz
}

// rowOffsets returns the offsets of the row (y, z) and of the rows at y−1,
// y+1 (same plane) and z−1, z+1 (same y), wrapping.
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

// rowClasses returns the classes of row (y, z) and of its −y, +y, −z, +z
// neighbour rows, the sentinel row standing for a neighbour across an open
// face, and the offsets of Solver.rowOffsets.
func (s *Solver) rowClasses(y, z int) (cr, cym, cyp, czm, czp []uint8, row, ym, yp, zm, zp int) {
	row, ym, yp, zm, zp = s.rowOffsets(y, z)
	nx := s.box.NX
	c := s.cls
	cr, cym, cyp, czm, czp = c[row:row+nx], c[ym:ym+nx], c[yp:yp+nx], c[zm:zm+nx], c[zp:zp+nx]
	if !s.box.Periodic[1] || s.box.NY == 1 {
		if y == 0 {
			cym = s.ins
		}
		if y == s.box.NY-1 {
			cyp = s.ins
		}
	}
	if !s.box.Periodic[2] || s.box.NZ == 1 {
		if z == 0 {
			czm = s.ins
		}
		if z == s.box.NZ-1 {
			czp = s.ins
		}
	}
	return
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

// electrode returns, for the voxel of class c at coordinate ca along the
// electrode axis, the conductance 2d of the half voxel to each electrode it
// touches (summed; 2 electrodes on an axis one voxel long) and its source
// term d·(low − high).
func (s *Solver) electrode(c uint8, ca int) (g, src float64) {
	n := s.box.dims()[s.elec]
	di := s.dtab[c]
	if ca == 0 {
		g += 2 * di
		src += di
	}
	if ca == n-1 {
		g += 2 * di
		src -= di
	}
	return g, src
}

// gather sets, for the voxels x = x0, x0+step, … (x < NX) of row (y, z),
// dg[x] = Σ_j g_xj, the diagonal of A (electrode links included), and,
// when v is not nil, sum[x] = Σ_j g_xj v_j, over the six face neighbours j,
// summed in pairs ((+x, −x) + (+y, −y)) + (+z, −z). Bonds across open faces, and from a
// voxel to itself, have conductance 0.
func (s *Solver) gather(v []float32, y, z, x0, step int, sum, dg []float64) {
	nx := s.box.NX
	g := s.gt
	cr, cym, cyp, czm, czp, row, ym, yp, zm, zp := s.rowClasses(y, z)
	cr, cym, cyp, czm, czp = cr[:nx], cym[:nx], cyp[:nx], czm[:nx], czp[:nx]
	dg = dg[:nx]
	if v != nil {
		sum = sum[:nx]
	}
	// The ends of the row, whose ±x neighbours wrap or are cut.
	lo, hi := x0, nx
	first, last := x0 == 0, x0 < nx && (nx-1-x0)%step == 0
	if first {
		lo += step
	}
	if last {
		hi = nx - 1
	}
	var vr, vym, vyp, vzm, vzp []float32
	if v != nil {
		vr, vym, vyp, vzm, vzp = v[row:row+nx], v[ym : ym+nx][:nx], v[yp : yp+nx][:nx], v[zm : zm+nx][:nx], v[zp : zp+nx][:nx]
		for i := lo; i < hi; i += step {
			ci := int(cr[i]) << 8
			gxp, gxm := float64(g[uint16(ci|int(cr[i+1]))]), float64(g[uint16(ci|int(cr[i-1]))])
			gyp, gym := float64(g[uint16(ci|int(cyp[i]))]), float64(g[uint16(ci|int(cym[i]))])
			gzp, gzm := float64(g[uint16(ci|int(czp[i]))]), float64(g[uint16(ci|int(czm[i]))])
			dg[i] = (gxp + gxm) + (gyp + gym) + (gzp + gzm)
			sum[i] = (gxp*float64(vr[i+1]) + gxm*float64(vr[i-1])) +
				(gyp*float64(vyp[i]) + gym*float64(vym[i])) +
				(gzp*float64(vzp[i]) + gzm*float64(vzm[i]))
		}
	} else {
		for i := lo; i < hi; i += step {
			ci := int(cr[i]) << 8
			dg[i] = (float64(g[uint16(ci|int(cr[i+1]))]) + float64(g[uint16(ci|int(cr[i-1]))])) +
				(float64(g[uint16(ci|int(cyp[i]))]) + float64(g[uint16(ci|int(cym[i]))])) +
				(float64(g[uint16(ci|int(czp[i]))]) + float64(g[uint16(ci|int(czm[i]))]))
		}
	}
	openX := !s.box.Periodic[0] || nx == 1
	for e := range 2 {
		i := e * (nx - 1)
		if (e == 0 && !first) || (e == 1 && (!last || nx == 1)) {
			continue
		}
		ip, im := (i+1)%nx, (i+nx-1)%nx
		cxp, cxm := cr[ip], cr[im]
		if openX {
			if i == nx-1 {
				cxp = sentinel
			}
			if i == 0 {
				cxm = sentinel
			}
		}
		ci := int(cr[i]) << 8
		gxp, gxm := float64(g[uint16(ci|int(cxp))]), float64(g[uint16(ci|int(cxm))])
		gyp, gym := float64(g[uint16(ci|int(cyp[i]))]), float64(g[uint16(ci|int(cym[i]))])
		gzp, gzm := float64(g[uint16(ci|int(czp[i]))]), float64(g[uint16(ci|int(czm[i]))])
		dg[i] = (gxp + gxm) + (gyp + gym) + (gzp + gzm)
		if v != nil {
			sum[i] = (gxp*float64(vr[ip]) + gxm*float64(vr[im])) +
				(gyp*float64(vyp[i]) + gym*float64(vym[i])) +
				(gzp*float64(vzp[i]) + gzm*float64(vzm[i]))
		}
	}
	if s.onFace(y, z) {
		for i := x0; i < nx; i += step {
			if s.elec == 0 && i != 0 && i != nx-1 {
				continue
			}
			ge, _ := s.electrode(cr[i], [3]int{i, y, z}[s.elec])
			dg[i] += ge
		}
	}
}

// setup fills, on the planes [z0, z1), the right-hand side r = b, w = 0
// and, in z until encodeDiag codes it, the inverse diagonal on the active
// set (0 elsewhere), with part = (0, b·b, c0) per plane, c0 being the
// dissipation at w = 0.
func (s *Solver) setup(z0, z1 int, _, dg []float64) {
	nx, ny := s.box.NX, s.box.NY
	for z := z0; z < z1; z++ {
		var rr, c0 float64
		for y := range ny {
			row := nx * (y + ny*z)
			clear(s.w[row : row+nx])
			s.gather(nil, y, z, 0, 1, nil, dg)
			for x := range nx {
				gp, b, ok := s.source(x, y, z)
				if !ok {
					s.r[row+x], s.z[row+x] = 0, 0
					continue
				}
				s.z[row+x] = invDiag(dg[x])
				c0 += gp
				if s.onFace(y, z) {
					ge, _ := s.electrode(s.cls[row+x], [3]int{x, y, z}[s.elec])
					c0 += ge / 4 // each link 2d·(1/2)²
				}
				rb := float32(b)
				s.r[row+x] = rb
				rr += float64(rb) * float64(rb)
			}
		}
		s.part[z] = [3]float64{0, rr, c0}
	}
}

// source returns, for voxel (x, y, z) of the active set, the conductance gp
// of its bond to the +a neighbour and its right-hand side
//
//	b = g(−a) − g(+a)   (plus the electrode source),
//
// a being the gradient axis; ok is false off the active set.
func (s *Solver) source(x, y, z int) (gp, b float64, ok bool) {
	i := s.box.Index(x, y, z)
	if s.act[i]>>s.axisA&1 == 0 {
		return 0, 0, false
	}
	a, dims := s.axisA, s.box.dims()
	co := [3]int{x, y, z}
	nb := func(step int) float64 {
		q := co
		q[a] += step
		if q[a] < 0 || q[a] >= dims[a] {
			if !s.box.Periodic[a] {
				return 0
			}
			q[a] = (q[a] + dims[a]) % dims[a]
		}
		return float64(s.gt[int(s.cls[i])<<8|int(s.cls[s.box.Index(q[0], q[1], q[2])])])
	}
	gp = nb(1)
	b = nb(-1) - gp
	if s.onFace(y, z) {
		_, src := s.electrode(s.cls[i], co[s.elec])
		b += src
	}
	return gp, b, true
}

// matvec computes q = A p on the planes [z0, z1) in single precision
// (applyRow), with part = (p·q, 0, 0) in double precision:
//
//	(A p)_i = Σ_j g_ij (p_i − p_j) + ge_i p_i.
func (s *Solver) matvec(z0, z1 int) {
	nx, ny := s.box.NX, s.box.NY
	p, q := s.mvIn, s.mvOut
	for z := z0; z < z1; z++ {
		var pq float64
		for y := range ny {
			row := nx * (y + ny*z)
			pr, qr := p[row:row+nx], q[row:row+nx]
			s.applyRow(p, qr, y, z, 0, 1)
			qr = qr[:len(pr)]
			for i, pi := range pr {
				pq += float64(pi) * float64(qr[i])
			}
		}
		s.part[z] = [3]float64{pq, 0, 0}
	}
}

// energy sets part = (Σ w_i ((A w)_i − 2 b_i), 0, 0) per plane, with w in
// mvIn.
func (s *Solver) energy(z0, z1 int, sum, dg []float64) {
	nx, ny := s.box.NX, s.box.NY
	w := s.mvIn
	for z := z0; z < z1; z++ {
		var e float64
		for y := range ny {
			s.gather(w, y, z, 0, 1, sum, dg)
			row := nx * (y + ny*z)
			for x := range nx {
				wi := float64(w[row+x])
				if wi == 0 {
					continue
				}
				_, b, ok := s.source(x, y, z)
				if !ok {
					continue
				}
				e += wi * (dg[x]*wi - sum[x] - 2*b)
			}
		}
		s.part[z] = [3]float64{e, 0, 0}
	}
}

// update does w += αp and r −= αq (q in z) on the planes [z0, z1), with
// part = (r·M⁻¹r, r·r, 0) for the Jacobi preconditioner M (z = M⁻¹r), or,
// with the multigrid on a properly coloured level, part = (Σ_red r z, r·r, 0)
// and the first multigrid half sweep done: z = D⁻¹r on red, 0 on black.
func (s *Solver) update(z0, z1 int) {
	nx, ny := s.box.NX, s.box.NY
	alpha := s.alpha
	red := s.useMG && s.coloured()
	for z := z0; z < z1; z++ {
		var rr, rz float64
		for y := range ny {
			lo := nx * (y + ny*z)
			r := s.r[lo : lo+nx]
			n := len(r)
			q, w, p, dc := s.z[lo : lo+nx][:n], s.w[lo : lo+nx][:n], s.p[lo : lo+nx][:n], s.dcode[lo : lo+nx][:n]
			c := (y + z) & 1 // x parity of the red voxels
			for i, ri := range r {
				w[i] = float32(float64(w[i]) + alpha*float64(p[i]))
				v := float32(float64(ri) - alpha*float64(q[i]))
				r[i] = v
				rr += float64(v) * float64(v)
				m := s.dinv[dc[i]]
				if dc[i] == dEscape {
					m = s.minv(lo + i)
				}
				zi := float32(float64(v) * float64(m))
				if red && i&1 != c {
					zi = 0
				}
				q[i] = zi
				rz += float64(v) * float64(zi)
			}
		}
		s.part[z] = [3]float64{rz, rr, 0}
	}
}

// direction does p = z + βp on the planes [z0, z1).
func (s *Solver) direction(z0, z1 int) {
	plane := s.box.NX * s.box.NY
	beta := s.beta
	for z := z0; z < z1; z++ {
		lo, hi := z*plane, (z+1)*plane
		p := s.p[lo:hi]
		zz := s.z[lo:hi][:len(p)]
		for i, pi := range p {
			p[i] = float32(float64(zz[i]) + beta*float64(pi))
		}
	}
}

// jacobi sets z = D⁻¹r on the planes [z0, z1), with part = (r·z, 0, 0).
func (s *Solver) jacobi(z0, z1 int) {
	plane := s.box.NX * s.box.NY
	for z := z0; z < z1; z++ {
		lo, hi := z*plane, (z+1)*plane
		r := s.r[lo:hi]
		zz := s.z[lo:hi][:len(r)]
		var rz float64
		for i, ri := range r {
			v := float32(float64(ri) * float64(s.minv(lo+i)))
			zz[i] = v
			rz += float64(ri) * float64(v)
		}
		s.part[z] = [3]float64{rz, 0, 0}
	}
}
