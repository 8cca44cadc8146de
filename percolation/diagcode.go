package percolation

import "math"

// The smoother's diagonal. Every fine-level Gauss–Seidel step multiplies by
// the inverse diagonal 1/A_ii rounded to single precision. A_ii is the sum
// of a voxel's six bond conductances (and its electrode links), each looked
// up from the classes of two voxels, so a paste has only a few dozen
// distinct values: the solver keeps one byte per voxel, a code into a
// table of them (dinv), in place of a float32 vector. Codes are handed out
// in raster order of first appearance, so they do not depend on the number
// of workers; a voxel whose value finds no free code (a field of many
// classes) gets dEscape and its value is recomputed where it is used,
// bit for bit the one the table would hold.
const dEscape = 255

// invDiag returns 1/d rounded to single precision, or 0 when d is 0 (a
// voxel bonded only to its own image).
func invDiag(d float64) float32 {
	if d > 0 {
		return float32(1 / d)
	}
	return 0
}

// diagAt returns A_ii of voxel (x, y, z) as gather computes it: the six
// bond conductances summed in pairs ((+x, −x) + (+y, −y)) + (+z, −z) in
// double precision, plus the electrode links on an electrode face.
func (s *Solver) diagAt(x, y, z int) float64 {
	nx := s.box.NX
	cr, cym, cyp, czm, czp, _, _, _, _, _ := s.rowClasses(y, z)
	cxp, cxm := cr[(x+1)%nx], cr[(x+nx-1)%nx]
	if !s.box.Periodic[0] || nx == 1 {
		if x == nx-1 {
			cxp = sentinel
		}
		if x == 0 {
			cxm = sentinel
		}
	}
	ci := int(cr[x]) << 8
	g := s.gt
	d := (float64(g[uint16(ci|int(cxp))]) + float64(g[uint16(ci|int(cxm))])) +
		(float64(g[uint16(ci|int(cyp[x]))]) + float64(g[uint16(ci|int(cym[x]))])) +
		(float64(g[uint16(ci|int(czp[x]))]) + float64(g[uint16(ci|int(czm[x]))]))
	if s.onFace(y, z) && (s.elec != 0 || x == 0 || x == nx-1) {
		ge, _ := s.electrode(cr[x], [3]int{x, y, z}[s.elec])
		d += ge
	}
	return d
}

// minv returns the single-precision inverse diagonal of voxel i (0 off
// the active set).
func (s *Solver) minv(i int) float32 {
	c := s.dcode[i]
	if c != dEscape {
		return s.dinv[c]
	}
	x, y, z := s.box.Coords(i)
	return invDiag(s.diagAt(x, y, z))
}

// encodeDiag codes the inverse diagonal that setup left in z into dcode
// and dinv.
func (s *Solver) encodeDiag() {
	const slots = 1024 // a power of two, above 4 × (dEscape − 1)
	var keys [slots]uint32
	var codes [slots]uint8
	limit := dEscape - 1
	if s.maxCodes > 0 {
		limit = min(limit, s.maxCodes)
	}
	s.dinv = [256]float32{}
	next, kept := 1, 0
	lastBits, lastCode := uint32(0), uint8(0)
	dc := s.dcode[:len(s.z)]
	for i, m := range s.z {
		if m == 0 {
			dc[i] = 0
			continue
		}
		b := math.Float32bits(m)
		if b == lastBits {
			dc[i] = lastCode
			continue
		}
		h := (b * 2654435761) >> 22 // 10 bits
		for keys[h] != 0 && keys[h] != b {
			h = (h + 1) & (slots - 1)
		}
		code := codes[h]
		if keys[h] == 0 {
			code = dEscape
			if next <= limit {
				code = uint8(next)
				s.dinv[code] = m
				next++
			}
			if kept < slots/2 { // else the probes might not end
				keys[h], codes[h] = b, code
				kept++
			}
		}
		dc[i] = code
		lastBits, lastCode = b, code
	}
}
