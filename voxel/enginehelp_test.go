package voxel

import (
	"math/rand/v2"
	"testing"

	"gelspace/kinetics"
)

// testPaste builds a small paste for engine tests without the packing
// code: random non-overlapping digitised spheres of a few diameters, each
// voxel of a clinker sphere given a phase at random in the given volume
// shares, until the solid fraction reaches solid. Sulfate spheres are
// separate. It is deliberately simple; the packing has its own tests.
func testPaste(t testing.TB, n int, solid float64, shares map[kinetics.ID]float64, gypsumShare float64, seed uint64) *Grid {
	t.Helper()
	g, err := NewGrid(n, n, n, 1)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(seed, 1))
	target := int(solid * float64(g.Len()))
	placed := 0
	id := int32(0)
	var ids []kinetics.ID
	var cum []float64
	c := 0.0
	for _, k := range []kinetics.ID{kinetics.C3S, kinetics.C2S, kinetics.C3A, kinetics.C4AF} {
		if shares[k] > 0 {
			c += shares[k]
			ids = append(ids, k)
			cum = append(cum, c)
		}
	}
	for _, diam := range []int{15, 11, 9, 7, 5, 3, 1} {
		rad := float64(diam) / 2
		for tries := 0; tries < 4000 && placed < target; tries++ {
			cx, cy, cz := r.IntN(n), r.IntN(n), r.IntN(n)
			var vox []int
			ok := true
			for dz := -diam / 2; dz <= diam/2 && ok; dz++ {
				for dy := -diam / 2; dy <= diam/2 && ok; dy++ {
					for dx := -diam / 2; dx <= diam/2; dx++ {
						if float64(dx*dx+dy*dy+dz*dz) > rad*rad {
							continue
						}
						i := g.Wrap(cx+dx, cy+dy, cz+dz)
						if g.Phase[i] != kinetics.Water {
							ok = false
							break
						}
						vox = append(vox, i)
					}
				}
			}
			if !ok || placed+len(vox) > target+diam*diam*diam {
				continue
			}
			id++
			gyp := r.Float64() < gypsumShare
			for _, i := range vox {
				g.Particle[i] = id
				if gyp {
					g.Phase[i] = kinetics.Gypsum
					continue
				}
				u := r.Float64() * c
				k := 0
				for k < len(cum)-1 && u >= cum[k] {
					k++
				}
				g.Phase[i] = ids[k]
			}
			placed += len(vox)
		}
	}
	return g
}
