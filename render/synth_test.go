package render

import (
	"math/rand/v2"

	"gelspace/kinetics"
)

// synthVolume builds an n³ paste-like box with a fixed seed: water, with
// grains of clinker (C3S, C2S, C3A, C4AF) carrying rims of inner C-S-H, a
// few gypsum grains, outer C-S-H, CH and AFt crystals in the pore space and
// some empty pores. frac in [0, 1] moves it from fresh (0) to mature (1).
func synthVolume(n int, frac float64, seed uint64) Volume {
	v := Volume{Phase: make([]uint8, n*n*n), NX: n, NY: n, NZ: n, VoxelUM: 1}
	rng := rand.New(rand.NewPCG(seed, 7))
	at := func(x, y, z int) int {
		x, y, z = (x%n+n)%n, (y%n+n)%n, (z%n+n)%n
		return x + n*(y+n*z)
	}
	ball := func(cx, cy, cz, r float64, fill func(d2, r2 float64) (uint8, bool)) {
		ri := int(r) + 1
		for dz := -ri; dz <= ri; dz++ {
			for dy := -ri; dy <= ri; dy++ {
				for dx := -ri; dx <= ri; dx++ {
					d2 := float64(dx*dx + dy*dy + dz*dz)
					if d2 > r*r {
						continue
					}
					if id, ok := fill(d2, r*r); ok {
						v.Phase[at(int(cx)+dx, int(cy)+dy, int(cz)+dz)] = id
					}
				}
			}
		}
	}
	clinker := []uint8{kinetics.C3S, kinetics.C3S, kinetics.C3S, kinetics.C2S, kinetics.C3A, kinetics.C4AF}
	grains := n * n * n / 900
	for i := 0; i < grains; i++ {
		cx, cy, cz := rng.Float64()*float64(n), rng.Float64()*float64(n), rng.Float64()*float64(n)
		r := 2 + rng.ExpFloat64()*float64(n)/25
		id := clinker[rng.IntN(len(clinker))]
		if rng.IntN(10) == 0 {
			id = kinetics.Gypsum
		}
		rim := frac * r * 0.5
		ball(cx, cy, cz, r, func(d2, r2 float64) (uint8, bool) {
			if id != kinetics.Gypsum && d2 > (r-rim)*(r-rim) {
				return kinetics.CSHInner, true
			}
			return id, true
		})
	}
	// Products in the pore space.
	for i := 0; i < int(frac*float64(grains)*3); i++ {
		cx, cy, cz := rng.Float64()*float64(n), rng.Float64()*float64(n), rng.Float64()*float64(n)
		id := []uint8{kinetics.CSHOuter, kinetics.CSHOuter, kinetics.CH, kinetics.AFt, kinetics.Empty}[rng.IntN(5)]
		r := 1 + rng.Float64()*float64(n)/30
		ball(cx, cy, cz, r, func(_, _ float64) (uint8, bool) {
			j := at(int(cx), int(cy), int(cz))
			_ = j
			return id, true
		})
	}
	return v
}
