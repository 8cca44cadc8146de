package voxel

import "math"

// noise is a periodic value-noise field on the box: pseudo-random values
// in [0, 1) at the corners of a lattice of cells, blended with a smoothstep
// weight, so that values are correlated over about one cell. The lattice
// has a whole number of cells per box edge, which keeps the field periodic
// with the box. Nothing is stored per voxel: corner values are hashes.
type noise struct {
	seed  uint64
	cells [3]int     // lattice cells per axis
	scale [3]float64 // cells per voxel per axis
}

// newNoise returns the field for a box of n voxels per axis with a cell
// edge of about cellVoxels voxels.
func newNoise(seed uint64, n [3]int, cellVoxels float64) *noise {
	f := &noise{seed: seed}
	for a := 0; a < 3; a++ {
		c := int(math.Round(float64(n[a]) / cellVoxels))
		if c < 1 {
			c = 1
		}
		f.cells[a] = c
		f.scale[a] = float64(c) / float64(n[a])
	}
	return f
}

// corner returns the lattice value at cell corner (i, j, k), indices taken
// modulo the lattice (splitmix64 finaliser over the packed indices).
func (f *noise) corner(i, j, k int) float64 {
	i, j, k = mod(i, f.cells[0]), mod(j, f.cells[1]), mod(k, f.cells[2])
	h := f.seed ^ (uint64(i)*0x9e3779b97f4a7c15 + uint64(j)*0xc2b2ae3d27d4eb4f + uint64(k)*0x165667b19e3779f9)
	h ^= h >> 30
	h *= 0xbf58476d1ce4e5b9
	h ^= h >> 27
	h *= 0x94d049bb133111eb
	h ^= h >> 31
	return float64(h>>11) / (1 << 53)
}

func mod(v, n int) int {
	v %= n
	if v < 0 {
		v += n
	}
	return v
}

func fade(t float64) float64 { return t * t * (3 - 2*t) }

// at returns the field at the centre of voxel (x, y, z): the naive
// evaluation, eight corners per call. row is the fast version.
func (f *noise) at(x, y, z int) float64 {
	u := (float64(x) + 0.5) * f.scale[0]
	v := (float64(y) + 0.5) * f.scale[1]
	w := (float64(z) + 0.5) * f.scale[2]
	i, j, k := int(math.Floor(u)), int(math.Floor(v)), int(math.Floor(w))
	tx, ty, tz := fade(u-float64(i)), fade(v-float64(j)), fade(w-float64(k))
	c := func(a, b, cc int) float64 { return f.corner(i+a, j+b, k+cc) }
	x00 := c(0, 0, 0) + tx*(c(1, 0, 0)-c(0, 0, 0))
	x10 := c(0, 1, 0) + tx*(c(1, 1, 0)-c(0, 1, 0))
	x01 := c(0, 0, 1) + tx*(c(1, 0, 1)-c(0, 0, 1))
	x11 := c(0, 1, 1) + tx*(c(1, 1, 1)-c(0, 1, 1))
	y0 := x00 + ty*(x10-x00)
	y1 := x01 + ty*(x11-x01)
	return y0 + tz*(y1-y0)
}

// row fills out[x] = at(x, y, z) for x in [0, len(out)), computing the
// corners once per cell crossed. It gives exactly the same values as at.
func (f *noise) row(y, z int, out []float64) {
	v := (float64(y) + 0.5) * f.scale[1]
	w := (float64(z) + 0.5) * f.scale[2]
	j, k := int(math.Floor(v)), int(math.Floor(w))
	ty, tz := fade(v-float64(j)), fade(w-float64(k))
	// yz-blend is not used: to match at() bit for bit the x-lerps come
	// first, so keep the four corner pairs of the current cell.
	ci := math.MinInt
	var c000, c100, c010, c110, c001, c101, c011, c111 float64
	for x := range out {
		u := (float64(x) + 0.5) * f.scale[0]
		i := int(math.Floor(u))
		if i != ci {
			if i == ci+1 {
				c000, c010, c001, c011 = c100, c110, c101, c111
			} else {
				c000, c010, c001, c011 = f.corner(i, j, k), f.corner(i, j+1, k), f.corner(i, j, k+1), f.corner(i, j+1, k+1)
			}
			c100, c110, c101, c111 = f.corner(i+1, j, k), f.corner(i+1, j+1, k), f.corner(i+1, j, k+1), f.corner(i+1, j+1, k+1)
			ci = i
		}
		tx := fade(u - float64(i))
		x00 := c000 + tx*(c100-c000)
		x10 := c010 + tx*(c110-c010)
		x01 := c001 + tx*(c101-c001)
		x11 := c011 + tx*(c111-c011)
		y0 := x00 + ty*(x10-x00)
		y1 := x01 + ty*(x11-x01)
		out[x] = y0 + tz*(y1-y0)
	}
}

// noiseBins is the number of histogram bins a noise value is sorted into.
const noiseBins = 1 << 14

func bin(v float64) int {
	b := int(v * noiseBins)
	if b >= noiseBins {
		b = noiseBins - 1
	}
	if b < 0 {
		b = 0
	}
	return b
}
