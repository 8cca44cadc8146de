package percolation

// Compacted colour lists of the fine level. On a properly coloured level
// the red–black half sweeps, the red-only residual restriction and the
// red-only prolongation visit the active voxels of one colour only; walking
// the full rows with stride 2 instead tests every voxel and moves as much
// memory as a full pass. colourList holds, per colour, the active voxels
// (nonzero diagonal) row by row in raster order, each with its diagonal,
// its six conductances and its aggregate packed in one entry, so that a
// half sweep reads one contiguous stream plus the vectors. The kernels add
// the same terms in the same order as the row kernels (sweep,
// restrictResidual), so their results are identical bit for bit
// (TestColourListNaive).

// colourEntry is one active voxel of a colour list.
type colourEntry struct {
	diag                         float64 // diagonal of A, > 0
	gxp, gxm, gyp, gym, gzp, gzm float32 // conductances to the +x, −x, +y, −y, +z, −z neighbours
	x                            int32   // x coordinate in its row
	agg                          int32   // aggregate on coarse level 0, or −1 when there are no coarse levels
}

// colourList is the compacted list of one colour: the entries of row
// r = y + NY·z are ent[ptr[r]:ptr[r+1]].
type colourList struct {
	ptr []int32
	ent []colourEntry
}

// buildColourLists fills s.col[c] for both colours from the fine level;
// agg may be nil (every entry then has agg −1).
func (s *Solver) buildColourLists(agg []int32) {
	f := &s.fine
	nx, ny, nz := f.nx, f.ny, f.nz
	gx, gy, gz := f.g[0], f.g[1], f.g[2]
	for c := range 2 {
		l := &s.col[c]
		l.ptr = growI32(l.ptr, ny*nz+1)
		l.ent = l.ent[:0]
	}
	for z := range nz {
		for y := range ny {
			row, ym, _, zm, _ := f.offsets(y, z)
			r := y + ny*z
			s.col[0].ptr[r] = int32(len(s.col[0].ent))
			s.col[1].ptr[r] = int32(len(s.col[1].ent))
			for x := range nx {
				i := row + x
				d := f.diag[i]
				if d == 0 {
					continue
				}
				xm := x - 1
				if x == 0 {
					xm = nx - 1
				}
				e := colourEntry{
					diag: d,
					gxp:  gx[i], gxm: gx[row+xm],
					gyp: gy[i], gym: gy[ym+x],
					gzp: gz[i], gzm: gz[zm+x],
					x: int32(x), agg: -1,
				}
				if agg != nil {
					e.agg = agg[i]
				}
				l := &s.col[(x+y+z)&1]
				l.ent = append(l.ent, e)
			}
		}
	}
	r := ny * nz
	s.col[0].ptr[r] = int32(len(s.col[0].ent))
	s.col[1].ptr[r] = int32(len(s.col[1].ent))
}

// sweepList is the half sweep of Gauss–Seidel over the entries of l (one
// colour of a properly coloured level) in the planes [z0, z1),
//
//	x_i = (f_i + Σ_j g_ij x_j) / A_ii,
//
// identical to sweep with first false. It adds Σ f_i x_i per plane to part
// when part is not nil.
func (lv *mgLevel) sweepList(l *colourList, x, f []float64, z0, z1 int, part [][3]float64) {
	nx, ny := lv.nx, lv.ny
	for z := z0; z < z1; z++ {
		var fx float64
		for y := range ny {
			row, ym, yp, zm, zp := lv.offsets(y, z)
			r := y + ny*z
			ents := l.ent[l.ptr[r]:l.ptr[r+1]]
			xr := x[row : row+nx]
			n := len(xr)
			fr := f[row : row+nx][:n]
			xym, xyp := x[ym : ym+nx][:n], x[yp : yp+nx][:n]
			xzm, xzp := x[zm : zm+nx][:n], x[zp : zp+nx][:n]
			for k := range ents {
				e := &ents[k]
				i := int(e.x)
				ip, im := i+1, i-1
				if i == 0 || i == n-1 {
					ip, im = (i+1)%n, (i+n-1)%n
				}
				v := fr[i] + float64(e.gxp)*xr[ip] + float64(e.gxm)*xr[im] +
					float64(e.gyp)*xyp[i] + float64(e.gym)*xym[i] +
					float64(e.gzp)*xzp[i] + float64(e.gzm)*xzm[i]
				v /= e.diag
				xr[i] = v
				fx += fr[i] * v
			}
		}
		if part != nil {
			part[z][0] += fx
		}
	}
}

// restrictList adds the residual f − A x of each entry of l in the planes
// [z0, z1) to the right-hand side cf of its aggregate, identical to
// restrictResidual for the colour of l. Ranges of planes that start at
// even planes write disjoint entries of cf.
func (lv *mgLevel) restrictList(l *colourList, x, f, cf []float64, z0, z1 int) {
	nx, ny := lv.nx, lv.ny
	for z := z0; z < z1; z++ {
		for y := range ny {
			row, ym, yp, zm, zp := lv.offsets(y, z)
			r := y + ny*z
			ents := l.ent[l.ptr[r]:l.ptr[r+1]]
			xr := x[row : row+nx]
			n := len(xr)
			fr := f[row : row+nx][:n]
			xym, xyp := x[ym : ym+nx][:n], x[yp : yp+nx][:n]
			xzm, xzp := x[zm : zm+nx][:n], x[zp : zp+nx][:n]
			for k := range ents {
				e := &ents[k]
				I := e.agg
				if I < 0 {
					continue
				}
				i := int(e.x)
				ip, im := i+1, i-1
				if i == 0 || i == n-1 {
					ip, im = (i+1)%n, (i+n-1)%n
				}
				cf[I] += fr[i] - e.diag*xr[i] + float64(e.gxp)*xr[ip] + float64(e.gxm)*xr[im] +
					float64(e.gyp)*xyp[i] + float64(e.gym)*xym[i] +
					float64(e.gzp)*xzp[i] + float64(e.gzm)*xzm[i]
			}
		}
	}
}

// prolongList adds x += P (coarse x) on the entries of l in the planes
// [z0, z1).
func (lv *mgLevel) prolongList(l *colourList, x, cx []float64, z0, z1 int) {
	nx, ny := lv.nx, lv.ny
	for z := z0; z < z1; z++ {
		for y := range ny {
			row := nx * (y + ny*z)
			r := y + ny*z
			ents := l.ent[l.ptr[r]:l.ptr[r+1]]
			xr := x[row : row+nx]
			for k := range ents {
				if I := ents[k].agg; I >= 0 {
					xr[ents[k].x] += cx[I]
				}
			}
		}
	}
}
