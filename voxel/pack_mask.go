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
	maskMu    sync.Mutex
	maskCache = map[int]*mask{}
	volCache  = map[int]int{}
)

// sphereVolume returns the voxel count of sphereMask(d) without building
// the mask (cached), in O(d²).
func sphereVolume(d int) int {
	if d < 1 {
		panic(fmt.Sprintf("voxel: sphereVolume: diameter %d < 1", d))
	}
	maskMu.Lock()
	defer maskMu.Unlock()
	if v, ok := volCache[d]; ok {
		return v
	}
	lo, hi := sphereRange(d)
	v := 0
	for dz := lo; dz <= hi; dz++ {
		for dy := lo; dy <= hi; dy++ {
			if x0, x1, ok := rowExtent(d, dy, dz); ok {
				v += x1 - x0 + 1
			}
		}
	}
	volCache[d] = v
	return v
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

// sphereMask returns the digitised sphere of diameter d voxels (cached;
// do not modify). The rule: a sphere of diameter d is centred on the centre
// of its anchor voxel when d is odd and on the anchor's lower corner when d
// is even, and holds every voxel whose centre lies within d/2 of that
// centre. Diameter 1 is the anchor voxel alone, 2 the 2×2×2 cube.
func sphereMask(d int) *mask {
	if d < 1 {
		panic(fmt.Sprintf("voxel: sphereMask: diameter %d < 1", d))
	}
	maskMu.Lock()
	defer maskMu.Unlock()
	if m, ok := maskCache[d]; ok {
		return m
	}
	m := buildMask(d)
	maskCache[d] = m
	return m
}

// buildMask computes the mask; offsets run lo..hi on each axis.
func buildMask(d int) *mask {
	lo, hi := sphereRange(d)
	m := &mask{d: d}
	for dz := lo; dz <= hi; dz++ {
		for dy := lo; dy <= hi; dy++ {
			if x0, x1, ok := rowExtent(d, dy, dz); ok {
				m.spans = append(m.spans, span{int32(dy), int32(dz), int32(x0), int32(x1)})
				m.volume += x1 - x0 + 1
			}
		}
	}
	// Exposed faces: 6 per voxel less 2 per shared face. A sphere is convex
	// along each axis, so runs are contiguous: x-runs share (len−1) faces;
	// y and z neighbours share the overlap of their runs. runs[dy][dz] is
	// the run at (dy, dz), x0 > x1 when empty.
	w := hi - lo + 1
	runs := make([]span, w*w)
	for k := range runs {
		runs[k] = span{x0: 1, x1: 0}
	}
	at := func(dy, dz int32) (span, bool) {
		y, z := int(dy)-lo, int(dz)-lo
		if y < 0 || y >= w || z < 0 || z >= w {
			return span{}, false
		}
		s := runs[y+w*z]
		return s, s.x0 <= s.x1
	}
	for _, s := range m.spans {
		runs[int(s.dy)-lo+w*(int(s.dz)-lo)] = s
	}
	shared := 0
	overlap := func(a, b span) int {
		l, h := max(a.x0, b.x0), min(a.x1, b.x1)
		if h < l {
			return 0
		}
		return int(h - l + 1)
	}
	for _, s := range m.spans {
		shared += int(s.x1 - s.x0)
		if t, ok := at(s.dy+1, s.dz); ok {
			shared += overlap(s, t)
		}
		if t, ok := at(s.dy, s.dz+1); ok {
			shared += overlap(s, t)
		}
	}
	m.faces = 6*m.volume - 2*shared
	return m
}
