package voxel

import (
	"fmt"
	"math"
	"sync"
)

// span is one x-run of a digitised sphere: the voxels (x0..x1, dy, dz)
// relative to the sphere's anchor voxel, x0 ≤ x1 inclusive.
type span struct {
	dy, dz, x0, x1 int32
}

// mask is a digitised sphere stored as x-runs.
type mask struct {
	d      int
	spans  []span
	volume int // voxels
	faces  int // exposed faces of the isolated sphere
}

var (
	sizeMu    sync.Mutex
	volCache  = map[int]int{}
	faceCache = map[int]int{}
)

// sphereVolume returns the voxel count of the digitised sphere of
// diameter d (see sphereMask), in O(d²), cached.
func sphereVolume(d int) int {
	v, _ := sphereSize(d)
	return v
}

// sphereFaces returns the number of exposed faces of the isolated
// digitised sphere of diameter d, cached.
func sphereFaces(d int) int {
	_, f := sphereSize(d)
	return f
}

// sphereSize computes volume and exposed faces from the row extents: 6
// faces per voxel less 2 per shared face. A digitised sphere is convex
// along each axis, so each (dy, dz) row is one run: a run of length L
// shares L − 1 faces along x, and rows adjacent in y or z share the
// overlap of their runs.
func sphereSize(d int) (volume, faces int) {
	if d < 1 {
		panic(fmt.Sprintf("voxel: sphere diameter %d < 1", d))
	}
	sizeMu.Lock()
	defer sizeMu.Unlock()
	if v, ok := volCache[d]; ok {
		return v, faceCache[d]
	}
	lo, hi := sphereRange(d)
	shared := 0
	overlap := func(a0, a1, b0, b1 int) int {
		l, h := max(a0, b0), min(a1, b1)
		if h < l {
			return 0
		}
		return h - l + 1
	}
	for dz := lo; dz <= hi; dz++ {
		for dy := lo; dy <= hi; dy++ {
			x0, x1, ok := rowExtent(d, dy, dz)
			if !ok {
				continue
			}
			volume += x1 - x0 + 1
			shared += x1 - x0
			if dy < hi {
				if t0, t1, ok := rowExtent(d, dy+1, dz); ok {
					shared += overlap(x0, x1, t0, t1)
				}
			}
			if dz < hi {
				if t0, t1, ok := rowExtent(d, dy, dz+1); ok {
					shared += overlap(x0, x1, t0, t1)
				}
			}
		}
	}
	faces = 6*volume - 2*shared
	volCache[d], faceCache[d] = volume, faces
	return volume, faces
}

// sphereRange returns the offsets lo..hi a sphere of diameter d spans on
// each axis.
func sphereRange(d int) (lo, hi int) {
	if d%2 == 0 {
		return -d / 2, d/2 - 1
	}
	return -(d - 1) / 2, (d - 1) / 2
}

// rowExtent returns the x-run of the sphere of diameter d at (dy, dz):
// the offsets dx whose voxel centre lies within d/2 of the sphere's
// centre (see sphereMask). All quantities are exact in float64.
func rowExtent(d, dy, dz int) (x0, x1 int, ok bool) {
	shift := 0.0
	if d%2 == 0 {
		shift = 0.5
	}
	fy, fz := float64(dy)+shift, float64(dz)+shift
	rem := float64(d)*float64(d)/4 - fy*fy - fz*fz
	if rem < shift*shift {
		return 0, 0, false
	}
	// largest m ≥ 0 with (m + shift)² ≤ rem
	m := int(math.Sqrt(rem) - shift)
	for m > 0 && (float64(m)+shift)*(float64(m)+shift) > rem {
		m--
	}
	for (float64(m+1)+shift)*(float64(m+1)+shift) <= rem {
		m++
	}
	if d%2 == 0 {
		return -m - 1, m, true
	}
	return -m, m, true
}

// sphereMask returns the digitised sphere of diameter d voxels as x-runs.
// The rule: a sphere of diameter d is centred on the centre of its anchor
// voxel when d is odd and on the anchor's lower corner when d is even, and
// holds every voxel whose centre lies within d/2 of that centre. Diameter
// 1 is the anchor voxel alone, 2 the 2×2×2 cube. Masks are not cached:
// the packer holds one class's masks at a time.
func sphereMask(d int) *mask {
	if d < 1 {
		panic(fmt.Sprintf("voxel: sphereMask: diameter %d < 1", d))
	}
	lo, hi := sphereRange(d)
	m := &mask{d: d}
	for dz := lo; dz <= hi; dz++ {
		for dy := lo; dy <= hi; dy++ {
			if x0, x1, ok := rowExtent(d, dy, dz); ok {
				m.spans = append(m.spans, span{int32(dy), int32(dz), int32(x0), int32(x1)})
			}
		}
	}
	m.volume, m.faces = sphereSize(d)
	return m
}
