package percolation

// Single-precision row kernels of the iteration: the operator application
// of conjugate gradients, the Gauss–Seidel half sweeps and the residual of
// the fine multigrid level. Each bond's conductance is looked up from the
// classes of its two voxels (as in Solver.gather) and the stencil is
// summed in single precision, bonds in pairs ((+x, −x) + (+y, −y)) +
// (+z, −z); only the sums over voxels (dot products, the restriction to the
// coarse level) are double precision. The setup, the dissipation that
// gives D/D0 and the coarse-level assembly keep the double-precision
// gather: D/D0 is evaluated exactly for the final iterate, so the rounding
// of these kernels only changes the iterates, as the single-precision
// vectors did already (TestDiffusivityFloat64 bounds the effect).

// bonds32 returns, for voxel x of row (y, z), its six conductances in the
// order +x, −x, +y, −y, +z, −z (0 across an open face and to itself), the
// six neighbour values of v in the same order, and its electrode
// conductance (0 off the electrode faces), in single precision.
func (s *Solver) bonds32(v []float32, y, z, x int) (g, vn [6]float32, ge float32) {
	nx := s.box.NX
	cr, cym, cyp, czm, czp, row, ym, yp, zm, zp := s.rowClasses(y, z)
	ip, im := (x+1)%nx, (x+nx-1)%nx
	cxp, cxm := cr[ip], cr[im]
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
	g = [6]float32{t[ci|int(cxp)], t[ci|int(cxm)], t[ci|int(cyp[x])], t[ci|int(cym[x])], t[ci|int(czp[x])], t[ci|int(czm[x])]}
	vn = [6]float32{v[row+ip], v[row+im], v[yp+x], v[ym+x], v[zp+x], v[zm+x]}
	if s.onFace(y, z) && (s.elec != 0 || x == 0 || x == nx-1) {
		e, _ := s.electrode(cr[x], [3]int{x, y, z}[s.elec])
		ge = float32(e)
	}
	return g, vn, ge
}

// apply32 returns (A v)_i = Σ_j g_ij (v_i − v_j) + ge_i v_i for voxel x of
// row (y, z), in single precision: the reference form of applyRow.
func (s *Solver) apply32(v []float32, y, z, x int) float32 {
	g, vn, ge := s.bonds32(v, y, z, x)
	vi := v[s.box.NX*(y+s.box.NY*z)+x]
	q := (g[0]*(vi-vn[0]) + g[1]*(vi-vn[1])) + (g[2]*(vi-vn[2]) + g[3]*(vi-vn[3])) + (g[4]*(vi-vn[4]) + g[5]*(vi-vn[5]))
	if ge != 0 {
		q += ge * vi
	}
	return q
}

// gsValue32 returns the Gauss–Seidel value (f_i + Σ_j g_ij x_j)·m_i of voxel
// x of row (y, z), in single precision, m being the stored inverse
// diagonal: the reference form of sweepRow.
func (s *Solver) gsValue32(xv, f []float32, y, z, x int) float32 {
	g, vn, _ := s.bonds32(xv, y, z, x)
	i := s.box.NX*(y+s.box.NY*z) + x
	sum := (g[0]*vn[0] + g[1]*vn[1]) + (g[2]*vn[2] + g[3]*vn[3]) + (g[4]*vn[4] + g[5]*vn[5])
	return (f[i] + sum) * s.minv(i)
}

// applyRow sets out[x] = (A v)_x, as apply32 computes it, for the voxels
// x = x0, x0+step, … (step 1 or 2) of row (y, z). The interior of the row
// runs in one loop; the ends (whose x neighbours wrap or are cut) and the
// rows on electrode faces go through apply32.
func (s *Solver) applyRow(v, out []float32, y, z, x0, step int) {
	nx := s.box.NX
	if s.onFace(y, z) && s.elec != 0 {
		for i := x0; i < nx; i += step {
			out[i] = s.apply32(v, y, z, i)
		}
		return
	}
	lo, hi := x0, nx-1
	if lo == 0 {
		out[0] = s.apply32(v, y, z, 0)
		lo = step
	}
	if x0 < nx && (nx-1-x0)%step == 0 && nx > 1 {
		out[nx-1] = s.apply32(v, y, z, nx-1)
	}
	if lo >= hi {
		return
	}
	g := s.gt
	cr, cym, cyp, czm, czp, row, ym, yp, zm, zp := s.rowClasses(y, z)
	cr, cym, cyp, czm, czp = cr[:nx], cym[:nx], cyp[:nx], czm[:nx], czp[:nx]
	vr, vym, vyp, vzm, vzp := v[row : row+nx][:nx], v[ym : ym+nx][:nx], v[yp : yp+nx][:nx], v[zm : zm+nx][:nx], v[zp : zp+nx][:nx]
	out = out[:nx]
	for i := lo; i < hi; i += step {
		ci := uint16(cr[i]) << 8
		vi := vr[i]
		out[i] = (g[ci|uint16(cr[i+1])]*(vi-vr[i+1]) + g[ci|uint16(cr[i-1])]*(vi-vr[i-1])) +
			(g[ci|uint16(cyp[i])]*(vi-vyp[i]) + g[ci|uint16(cym[i])]*(vi-vym[i])) +
			(g[ci|uint16(czp[i])]*(vi-vzp[i]) + g[ci|uint16(czm[i])]*(vi-vzm[i]))
	}
}
