package percolation

import (
	"math/rand/v2"
	"testing"

	"gelspace/kinetics"
)

// BenchmarkLabel200 labels random site percolation at p = 0.35, just above
// the threshold, on an open 200³ box (8 million voxels).
func BenchmarkLabel200(b *testing.B) {
	box := Box{NX: 200, NY: 200, NZ: 200}
	in := randomSet(rand.New(rand.NewPCG(7, 8)), box.Len(), 0.35)
	var l Labeler
	l.Label(box, in) // size the buffers
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		l.Label(box, in)
	}
}

// BenchmarkLabel200Periodic is BenchmarkLabel200 on a periodic box.
func BenchmarkLabel200Periodic(b *testing.B) {
	box := PeriodicBox(200, 200, 200)
	in := randomSet(rand.New(rand.NewPCG(7, 8)), box.Len(), 0.35)
	var l Labeler
	l.Label(box, in)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		l.Label(box, in)
	}
}

// spherePaste packs overlapping C3S spheres of radius 3–7 voxels at random
// in a periodic box until the solid fraction reaches solidFrac, then turns
// the pore voxels that touch a grain into outer C-S-H with probability
// pCSH: a crude hydrated paste for benchmarks.
func spherePaste(box Box, seed uint64, solidFrac, pCSH float64) []uint8 {
	rng := rand.New(rand.NewPCG(seed, 17))
	phase := waterPhases(box.Len())
	n, solid := box.Len(), 0
	dim := box.dims()
	for float64(solid) < solidFrac*float64(n) {
		r := 3 + 4*rng.Float64()
		c := [3]float64{rng.Float64() * float64(dim[0]), rng.Float64() * float64(dim[1]), rng.Float64() * float64(dim[2])}
		ri := int(r) + 1
		for dz := -ri; dz <= ri; dz++ {
			for dy := -ri; dy <= ri; dy++ {
				for dx := -ri; dx <= ri; dx++ {
					x, y, z := int(c[0])+dx, int(c[1])+dy, int(c[2])+dz
					fx, fy, fz := float64(x)+0.5-c[0], float64(y)+0.5-c[1], float64(z)+0.5-c[2]
					if fx*fx+fy*fy+fz*fz > r*r {
						continue
					}
					i := box.Index((x%dim[0]+dim[0])%dim[0], (y%dim[1]+dim[1])%dim[1], (z%dim[2]+dim[2])%dim[2])
					if phase[i] == kinetics.Water {
						phase[i] = kinetics.C3S
						solid++
					}
				}
			}
		}
	}
	out := append([]uint8(nil), phase...)
	for z := range dim[2] {
		for y := range dim[1] {
			for x := range dim[0] {
				i := box.Index(x, y, z)
				if phase[i] != kinetics.Water {
					continue
				}
				touch := false
				for _, o := range [6][3]int{{1, 0, 0}, {-1, 0, 0}, {0, 1, 0}, {0, -1, 0}, {0, 0, 1}, {0, 0, -1}} {
					j := box.Index((x+o[0]+dim[0])%dim[0], (y+o[1]+dim[1])%dim[1], (z+o[2]+dim[2])%dim[2])
					touch = touch || phase[j] == kinetics.C3S
				}
				if touch && rng.Float64() < pCSH {
					out[i] = kinetics.CSHOuter
				}
			}
		}
	}
	return out
}

// BenchmarkDiffusivity100 solves the three axes of a 100³ periodic
// sphere-packed paste (porosity about 0.4, C-S-H rims) to relative residual
// 1e-6.
func BenchmarkDiffusivity100(b *testing.B) {
	box := PeriodicBox(100, 100, 100)
	phase := spherePaste(box, 1, 0.5, 0.4)
	var s Solver
	res, err := s.Diffusivity(box, phase, DiffusivityOptions{})
	if err != nil {
		b.Fatal(err)
	}
	var pores int
	for _, p := range phase {
		if kinetics.IsPore(p) {
			pores++
		}
	}
	b.Logf("porosity %.3f: D/D0 %.4g, iterations %v", float64(pores)/float64(box.Len()), res.Rel, res.Iter)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if _, err := s.Diffusivity(box, phase, DiffusivityOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
