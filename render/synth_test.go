package render

import (
	"math"
	"math/rand/v2"

	"gelspace/kinetics"
)

// synthVolume builds an n³ paste-like box with a fixed seed: water, with
// grains of clinker (C3S, C2S, C3A, C4AF) carrying rims of inner C-S-H, a
// few gypsum grains, outer C-S-H, CH and AFt crystals in the pore space and
// some empty pores. frac in [0, 1] moves it from fresh (0) to mature (1).
func synthVolume(n int, frac float64, seed uint64) Volume {
	v := Volume{Phase: make([]uint8, n*n*n), NX: n, NY: n, NZ: n, VoxelUM: 1}
	for i := range v.Phase {
		v.Phase[i] = kinetics.Water // 0 is not a phase
	}
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

// synthSeries builds an invented n-row series from 0.1 h to 672 h with the
// columns of series.csv, shaped like a hydrating paste at w/c wc. Pore
// connectivity and diffusivity are NaN where "not computed" (every third
// row for diffusivity, and before 1 h).
func synthSeries(n int, wc float64) *Series {
	cols := []string{"time_h", "temperature_c", "alpha", "alpha_c3s", "alpha_c2s", "alpha_c3a", "alpha_c4af",
		"heat_j_per_g", "heat_flow_mw_per_g", "chem_shrinkage_ml_per_g", "water_consumed_g_per_g",
		"nonevaporable_water_g_per_g", "capillary_porosity", "water_filled_porosity",
		"solids_connected_fraction", "solids_span_axes", "pores_connected_fraction", "pores_span_axes",
		"rel_diffusivity"}
	keys := kinetics.Keys(kinetics.RolePore, kinetics.RoleClinker, kinetics.RoleSulfate, kinetics.RoleFiller, kinetics.RoleHydrate)
	for _, k := range keys {
		cols = append(cols, "vol_"+k)
	}
	s := &Series{Columns: cols}
	p := wc / (wc + 1/3.15)
	for i := 0; i < n; i++ {
		t := 0.1 * math.Pow(6720, float64(i)/float64(n-1))
		// A sigmoid in log time, with a dormant period.
		sig := func(t50, k float64) float64 { return 1 / (1 + math.Pow(t50/t, k)) }
		a3s, a2s, a3a, a4af := 0.95*sig(14, 1.6), 0.7*sig(150, 1.1), 0.9*sig(6, 1.3), 0.8*sig(30, 1.0)
		a := 0.6*a3s + 0.17*a2s + 0.08*a3a + 0.15*a4af
		heat := 500*0.6*a3s + 260*0.17*a2s + 866*0.08*a3a + 420*0.15*a4af
		flow := 1000 * 500 * 0.6 * 1.6 / 3600 * math.Pow(14/t, 1.6) / t / math.Pow(1+math.Pow(14/t, 1.6), 2)
		cap := PowersCapillaryPorosity(wc, a) * 1.05
		solids := math.Min(1, math.Max(0, (a-0.02)*6))
		pores := math.Min(1, math.Max(0, (cap-0.16)*12))
		diff := 0.5 * math.Pow(cap, 2.5)
		if i%3 == 1 {
			diff = math.NaN()
		}
		if t < 1 {
			pores = math.NaN()
		}
		row := []float64{t, 20, a, a3s, a2s, a3a, a4af, heat, flow, 0.064 * a, 0.23 * a, 0.23 * a, cap, cap * 0.9,
			solids, math.Min(3, math.Floor(solids*4)), pores, math.Min(3, math.Floor(pores*4)), diff}
		vol := map[string]float64{"water": cap * 0.9, "empty": cap * 0.1, "c3s": (1 - p) * 0.6 * (1 - a3s),
			"c2s": (1 - p) * 0.17 * (1 - a2s), "c3a": (1 - p) * 0.08 * (1 - a3a), "c4af": (1 - p) * 0.1 * (1 - a4af),
			"gypsum": (1 - p) * 0.05 * (1 - a3a)}
		rest := 1.0
		for _, v := range vol {
			rest -= v
		}
		vol["csh_inner"], vol["csh_outer"], vol["ch"], vol["aft"] = rest*0.35, rest*0.35, rest*0.22, rest*0.08
		for _, k := range keys {
			row = append(row, vol[k])
		}
		s.Rows = append(s.Rows, row)
	}
	return s
}
