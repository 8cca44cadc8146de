package configs

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"gelspace/kinetics"
	"gelspace/voxel"
)

// KineticsConfig adjusts the engine's rate constants ([kinetics]). Absent
// keys keep kinetics.DefaultParams. The three scales are the knobs that
// gelspace fit adjusts.
type Kinetics struct {
	// DissolutionScale multiplies every dissolution velocity.
	DissolutionScale float64 `toml:"dissolution_scale"`
	// NucleationScale multiplies the C-S-H and CH nucleation rates.
	NucleationScale float64 `toml:"nucleation_scale"`
	// ThroughProductScale multiplies every through-product factor β
	// (capped at 1).
	ThroughProductScale float64 `toml:"through_product_scale"`

	SilicateSaturation    *float64 `toml:"silicate_saturation"`
	CSHNucleationPerUM2H  *float64 `toml:"csh_nucleation_per_um2_h"`
	CHSaturation          *float64 `toml:"ch_saturation"`
	CHNucleationPerUM3H   *float64 `toml:"ch_nucleation_per_um3_h"`
	AttemptPerH           *float64 `toml:"attempt_per_h"`
	ProductLengthUM       *float64 `toml:"product_length_um"`
	NucleationEaKJPerMol  *float64 `toml:"nucleation_ea_kj_per_mol"`
	ProductDensifyK       *float64 `toml:"product_densify_k"`
	SulfateSupplyLengthUM *float64 `toml:"sulfate_supply_length_um"`
	SulfateHalf           *float64 `toml:"sulfate_half"`
	SulfateHill           *float64 `toml:"sulfate_hill"`
	WaterHalfPorosity     *float64 `toml:"water_half_porosity"`
	WaterExponent         *float64 `toml:"water_exponent"`

	// Phase holds per-phase dissolution laws by phase key (c3s, c2s, c3a,
	// c4af, gypsum, hemihydrate, anhydrite).
	Phase map[string]PhaseKinetics `toml:"phase"`
}

// PhaseKinetics overrides one phase's dissolution law.
type PhaseKinetics struct {
	VelocityUMPerH *float64 `toml:"velocity_um_per_h"`
	ThroughProduct *float64 `toml:"through_product"`
	SulfateFactor  *float64 `toml:"sulfate_factor"`
	EaKJPerMol     *float64 `toml:"ea_kj_per_mol"`
}

// defaultKinetics is the [kinetics] of a config that has none.
func defaultKinetics() Kinetics {
	return Kinetics{DissolutionScale: 1, NucleationScale: 1, ThroughProductScale: 1}
}

// Params returns the engine parameters the config calls for.
func (k *Kinetics) Params() (kinetics.Params, error) {
	p := kinetics.DefaultParams()
	for name, s := range map[string]float64{"dissolution_scale": k.DissolutionScale, "nucleation_scale": k.NucleationScale, "through_product_scale": k.ThroughProductScale} {
		if !(s > 0 && s <= 1000) {
			return p, fmt.Errorf("kinetics.%s = %g: must be > 0 and ≤ 1000", name, s)
		}
	}
	set := func(dst *float64, src *float64) {
		if src != nil {
			*dst = *src
		}
	}
	set(&p.SilicateSaturation, k.SilicateSaturation)
	set(&p.CSHNucleationPerUM2H, k.CSHNucleationPerUM2H)
	set(&p.CHSaturation, k.CHSaturation)
	set(&p.CHNucleationPerUM3H, k.CHNucleationPerUM3H)
	set(&p.AttemptPerH, k.AttemptPerH)
	set(&p.ProductLengthUM, k.ProductLengthUM)
	set(&p.NucleationEaKJPerMol, k.NucleationEaKJPerMol)
	set(&p.ProductDensifyK, k.ProductDensifyK)
	set(&p.SulfateSupplyLengthUM, k.SulfateSupplyLengthUM)
	set(&p.SulfateHalf, k.SulfateHalf)
	set(&p.SulfateHill, k.SulfateHill)
	set(&p.WaterHalfPorosity, k.WaterHalfPorosity)
	set(&p.WaterExponent, k.WaterExponent)
	keys := make([]string, 0, len(k.Phase))
	for key := range k.Phase {
		keys = append(keys, key)
	}
	sort.Strings(keys)
	for _, key := range keys {
		ph := kinetics.ByKey(key)
		var d *kinetics.Dissolution
		if ph != nil {
			d = p.DissolutionOf(ph.ID)
		}
		if d == nil || d.VelocityUMPerH == 0 { // co-reactants (ettringite, calcite, CH) have no law of their own
			return p, fmt.Errorf("kinetics.phase.%s: not a dissolving phase (allowed: c3s, c2s, c3a, c4af, gypsum, hemihydrate, anhydrite, silica_fume, fly_ash, slag, metakaolin)", key)
		}
		o := k.Phase[key]
		set(&d.VelocityUMPerH, o.VelocityUMPerH)
		set(&d.ThroughProduct, o.ThroughProduct)
		set(&d.SulfateFactor, o.SulfateFactor)
		set(&d.EaKJPerMol, o.EaKJPerMol)
	}
	for i := range p.Dissolve {
		p.Dissolve[i].VelocityUMPerH *= k.DissolutionScale
		p.Dissolve[i].ThroughProduct = min(1, p.Dissolve[i].ThroughProduct*k.ThroughProductScale)
	}
	p.CSHNucleationPerUM2H *= k.NucleationScale
	p.CHNucleationPerUM3H *= k.NucleationScale
	return p, p.Validate()
}

// Heat capacities for the adiabatic mode when the config gives none: cement
// about 0.75 J/(g·K) and water 4.18 J/(g·K) (common practice).
const (
	cementHeatCapacity = 0.75
	waterHeatCapacity  = 4.18
)

// EngineSettings builds the hydration engine's settings (rate
// parameters, thermal regime, sealed or saturated curing, seed) from the
// config; Validate calls it, so a validated config fails here only if its
// schedule file changed since. Errors are *InputError.
func (cfg *Config) EngineSettings() (voxel.EngineSettings, error) {
	r := cfg.located()
	p, err := cfg.Kinetics.Params()
	if err != nil {
		key, msg, _ := strings.Cut(err.Error(), " = ")
		if msg == "" {
			key, msg, _ = strings.Cut(err.Error(), ": ")
		}
		return voxel.EngineSettings{}, r.errAt(kineticsKey(key), "%s", msg)
	}
	if err := cfg.applySCMKinetics(&p); err != nil {
		return voxel.EngineSettings{}, err
	}
	th := kinetics.Thermal{Mode: cfg.Curing.TemperatureMode, TempC: cfg.Curing.TemperatureC}
	switch th.Mode {
	case "", kinetics.Isothermal:
		th.Mode = kinetics.Isothermal
	case kinetics.Schedule:
		path := cfg.Curing.Schedule
		if path == "" {
			return voxel.EngineSettings{}, r.errAt("curing.schedule", "missing: temperature_mode = \"schedule\" needs curing.schedule = \"file.csv\" (columns time_h, temperature_c)")
		}
		if !filepath.IsAbs(path) {
			path = filepath.Join(cfg.Dir, path)
		}
		steps, err := readSchedule(path)
		if err != nil {
			return voxel.EngineSettings{}, r.errAt("curing.schedule", "%v", err)
		}
		th.Steps = steps
	case kinetics.Adiabatic:
		cp := cfg.Curing.HeatCapacityJPerKPerGCement
		if cp == 0 {
			cp = cementHeatCapacity + cfg.Mix.WC*waterHeatCapacity
		}
		if !(cp >= 0.5 && cp <= 100) {
			return voxel.EngineSettings{}, r.errAt("curing.heat_capacity_j_per_k_per_g_cement", "%g J/K per g of cement: must be between 0.5 and 100", cp)
		}
		th.HeatCapacityJPerGK = cp
	default:
		return voxel.EngineSettings{}, r.errAt("curing.temperature_mode", "%q: must be \"isothermal\", \"schedule\" or \"adiabatic\"", th.Mode)
	}
	if err := th.Validate(); err != nil {
		return voxel.EngineSettings{}, r.errAt("curing", "%v", err)
	}
	return voxel.EngineSettings{Params: p, Thermal: th, Sealed: cfg.Curing.Mode == "sealed", Seed: uint64(cfg.Seed)}, nil
}

// readSchedule reads a temperature schedule: CSV with a header row naming
// time_h and temperature_c, then rows with increasing time_h.
func readSchedule(path string) ([]kinetics.SchedulePoint, error) {
	data, err := ReadInput(path, "temperature schedule")
	if err != nil {
		return nil, err
	}
	return parseSchedule(path, bytes.NewReader(data))
}

func parseSchedule(name string, r io.Reader) ([]kinetics.SchedulePoint, error) {
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.TrimLeadingSpace = true
	head, err := cr.Read()
	if err != nil {
		return nil, fmt.Errorf("%s: no header row (want time_h,temperature_c)", name)
	}
	ti, ci := -1, -1
	for i, h := range head {
		switch strings.TrimSpace(strings.ToLower(h)) {
		case "time_h":
			ti = i
		case "temperature_c":
			ci = i
		}
	}
	if ti < 0 || ci < 0 {
		return nil, fmt.Errorf("%s: header %s must name time_h and temperature_c", name, Snippet(strings.Join(head, ",")))
	}
	var out []kinetics.SchedulePoint
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: line %d: %v", name, line, err)
		}
		if len(rec) <= max(ti, ci) {
			return nil, fmt.Errorf("%s: line %d: too few columns", name, line)
		}
		t, err1 := strconv.ParseFloat(strings.TrimSpace(rec[ti]), 64)
		c, err2 := strconv.ParseFloat(strings.TrimSpace(rec[ci]), 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("%s: line %d: time_h and temperature_c must be numbers", name, line)
		}
		if math.IsNaN(t) || math.IsInf(t, 0) || math.IsNaN(c) || math.IsInf(c, 0) {
			return nil, fmt.Errorf("%s: line %d: time_h and temperature_c must be finite numbers", name, line)
		}
		if t > MaxUntilH {
			return nil, fmt.Errorf("%s: line %d: time_h = %g must be ≤ %g", name, line, t, MaxUntilH)
		}
		if t < 0 || (len(out) > 0 && t <= out[len(out)-1].TimeH) {
			return nil, fmt.Errorf("%s: line %d: time_h = %g must be ≥ 0 and increase from row to row", name, line, t)
		}
		if c < -10 || c > 95 {
			return nil, fmt.Errorf("%s: line %d: temperature_c = %g must be between -10 and 95", name, line, c)
		}
		out = append(out, kinetics.SchedulePoint{TimeH: t, TempC: c})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: no rows", name)
	}
	return out, nil
}
