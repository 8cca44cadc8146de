package run

import (
	"encoding/csv"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"gelspace/configs"
	"gelspace/voxel"
)

// Powers' gel–space ratio against a hand calculation of
// x = 0.68 α / (0.32 α + w/c) (Mindess, Young & Darwin, Concrete 2003 —
// from memory): α 0.7, w/c 0.45 → 0.476 / 0.674 = 0.70623.
func TestGelSpaceRatio(t *testing.T) {
	if x := GelSpaceRatio(0.7, 0.45); math.Abs(x-0.70623145) > 1e-7 {
		t.Errorf("gel–space ratio %.8f, want 0.70623145", x)
	}
	// Complete hydration at w/c 0.36 gives x = 0.68 / 0.68 = 1: the
	// product fills the space (the same source's limit).
	if x := GelSpaceRatio(1, 0.36); math.Abs(x-1) > 1e-12 {
		t.Errorf("gel–space ratio at α 1, w/c 0.36: %g, want 1", x)
	}
	if p := GelPorosity(0.5); math.Abs(p-0.14) > 1e-12 {
		t.Errorf("gel porosity of a paste half C-S-H: %g, want 0.14", p)
	}
}

// The equivalent age of ASTM C1074, t_e = Σ exp(−E/R (1/T − 1/T_r)) Δt
// (formula from memory), against a hand calculation: 10 h at 30 °C and
// 5 h at 10 °C with E = 40 kJ/mol, R = 8.314462618 J/(mol·K), T_r =
// 293.15 K: exp(4810.93 × 1.12526e-4) = 1.718325 and exp(−4810.93 ×
// 1.20618e-4) = 0.560129, so t_e = 17.18325 + 2.80065 = 19.98390 h.
func TestEquivalentAge(t *testing.T) {
	te := 10*EquivalentAgeFactor(30, 40) + 5*EquivalentAgeFactor(10, 40)
	if math.Abs(te-19.983900) > 1e-5 {
		t.Errorf("equivalent age %.6f h, want 19.983900 h", te)
	}
	if f := EquivalentAgeFactor(20, 40); f != 1 {
		t.Errorf("factor at the reference temperature %g, want 1", f)
	}
}

// The chloride estimate D_eff = D0/F with D0(Cl⁻, 25 °C) = 2.03e-9 m²/s
// (CRC Handbook of Chemistry and Physics — from memory) against a hand
// calculation: F = 250 → 8.12e-12 m²/s; no conducting path → 0.
func TestChlorideDEff(t *testing.T) {
	if d := ChlorideDEff(250); math.Abs(d-8.12e-12) > 1e-24 {
		t.Errorf("D_eff at F 250: %g, want 8.12e-12", d)
	}
	if d := ChlorideDEff(math.Inf(1)); d != 0 {
		t.Errorf("D_eff without a path: %g, want 0", d)
	}
}

// The derived columns of a short run follow their definitions row by
// row: at 20 °C the equivalent age is the age; the gel–space ratio is
// Powers' at the row's α; total porosity is capillary plus gel; bound
// water is the non-evaporable water per 100 g; the masses are positive
// once the phases form; the formation factor is 1/(D/D0) where D/D0 is
// computed.
func TestDerivedColumns(t *testing.T) {
	cfg, err := configs.Load("", []string{"box.voxels=20", "curing.until_h=12", "output.times_h=[4, 12]", "output.diffusivity_times_h=[12]"})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := Run(cfg, Options{Out: dir}); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, "samples.csv"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	idx := map[string]int{}
	for i, c := range recs[0] {
		idx[c] = i
	}
	get := func(r []string, c string) float64 {
		k, ok := idx[c]
		if !ok {
			t.Fatalf("no column %s", c)
		}
		if r[k] == "" {
			return math.NaN()
		}
		v, err := strconv.ParseFloat(r[k], 64)
		if err != nil {
			t.Fatalf("%s: %v", c, err)
		}
		return v
	}
	const tol = 1e-6 // the CSV keeps 8 significant digits
	near := func(a, b float64) bool { return math.Abs(a-b) <= tol*math.Max(1, math.Abs(b)) }
	for _, r := range recs[1:] {
		th := get(r, "time_h")
		if te := get(r, "equivalent_age_h"); !near(te, th) {
			t.Errorf("%g h: equivalent age %g h at 20 °C", th, te)
		}
		if x := get(r, "gel_space_ratio"); !near(x, GelSpaceRatio(get(r, "alpha"), 0.45)) {
			t.Errorf("%g h: gel–space ratio %g", th, x)
		}
		if p := get(r, "total_porosity"); !near(p, get(r, "capillary_porosity")+get(r, "gel_porosity")) {
			t.Errorf("%g h: total porosity %g", th, p)
		}
		if w := get(r, "bound_water_g_per_100g"); !near(w, 100*get(r, "nonevaporable_water_g_per_g")) {
			t.Errorf("%g h: bound water %g g/100 g", th, w)
		}
		if d := get(r, "rel_diffusivity"); !math.IsNaN(d) {
			if ff := get(r, "formation_factor"); !near(ff, 1/d) {
				t.Errorf("%g h: formation factor %g, D/D0 %g", th, ff, d)
			}
		} else if !math.IsNaN(get(r, "formation_factor")) {
			t.Errorf("%g h: formation factor without D/D0", th)
		}
	}
	last := recs[len(recs)-1]
	if !(get(last, "ch_g_per_100g") > 0) || !(get(last, "csh_g_per_100g") > 0) || !(get(last, "aft_g_per_100g") > 0) {
		t.Errorf("at 12 h: CH %v, C-S-H %v, AFt %v g/100 g", get(last, "ch_g_per_100g"), get(last, "csh_g_per_100g"), get(last, "aft_g_per_100g"))
	}
}

// A 10 °C isothermal run ages more slowly than the clock: t_e = t ×
// exp(−E/R (1/283.15 − 1/293.15)).
func TestEquivalentAgeIsothermalCold(t *testing.T) {
	cfg, err := configs.Load("", []string{"box.voxels=20", "curing.until_h=4", "output.times_h=[4]", "output.diffusivity=false", "curing.temperature_c=10"})
	if err != nil {
		t.Fatal(err)
	}
	h := runToEnd(t, cfg)
	last := h.st.Samples[len(h.st.Samples)-1]
	if want := 4 * EquivalentAgeFactor(10, 40); math.Abs(last[colEqAge]-want) > 1e-9 {
		t.Errorf("equivalent age %g h, want %g h", last[colEqAge], want)
	}
}

// runToEnd packs and hydrates cfg without writing files.
func runToEnd(t *testing.T, cfg *configs.Config) *hydration {
	t.Helper()
	m, err := Resolve(cfg)
	if err != nil {
		t.Fatal(err)
	}
	set, err := cfg.EngineSettings()
	if err != nil {
		t.Fatal(err)
	}
	res, err := Pack(m)
	if err != nil {
		t.Fatal(err)
	}
	e, err := voxel.NewEngine(res.Grid, set)
	if err != nil {
		t.Fatal(err)
	}
	h := newHydration(cfg, set, e)
	if err := h.start(); err != nil {
		t.Fatal(err)
	}
	for {
		more, err := h.step()
		if err != nil {
			t.Fatal(err)
		}
		if !more {
			return h
		}
	}
}
