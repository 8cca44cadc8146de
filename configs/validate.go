package configs

import (
	"fmt"
	"math"
	"reflect"
	"sort"
	"strings"
)

// checkNumbers is the first step of Validate: every number of the config
// must be finite (TOML allows nan and inf, and NaN passes every
// comparison), then the [kinetics] constants must lie in ranges that keep
// the event loop finite: no rate so large or saturation so small that
// simulated time stops advancing. Each error names the key at its line or
// at the --set override that gave it.
func (c *Config) checkNumbers() error {
	r := c.located()
	if key, v, ok := firstNonFinite(reflect.ValueOf(*c), ""); ok {
		return r.errAt(key, "%g: must be a finite number", v)
	}
	return c.checkKinetics()
}

// firstNonFinite walks the toml-tagged fields of a config struct (maps
// in key order) and returns the first NaN or ±Inf with its dotted key.
func firstNonFinite(v reflect.Value, prefix string) (string, float64, bool) {
	switch v.Kind() {
	case reflect.Float32, reflect.Float64:
		if f := v.Float(); math.IsNaN(f) || math.IsInf(f, 0) {
			return prefix, f, true
		}
	case reflect.Pointer:
		if !v.IsNil() {
			return firstNonFinite(v.Elem(), prefix)
		}
	case reflect.Slice, reflect.Array:
		for i := 0; i < v.Len(); i++ {
			p := prefix // a list of numbers is one key (output.times_h)
			if e := v.Index(i); e.Kind() == reflect.Struct {
				p = joinKey(prefix, fmt.Sprint(i)) // an array of tables is reached by index (scm.0)
			}
			if k, f, ok := firstNonFinite(v.Index(i), p); ok {
				return k, f, true
			}
		}
	case reflect.Map:
		keys := v.MapKeys()
		sort.Slice(keys, func(i, j int) bool { return keys[i].String() < keys[j].String() })
		for _, k := range keys {
			if key, f, ok := firstNonFinite(v.MapIndex(k), joinKey(prefix, k.String())); ok {
				return key, f, true
			}
		}
	case reflect.Struct:
		t := v.Type()
		for i := 0; i < t.NumField(); i++ {
			tag := t.Field(i).Tag.Get("toml")
			if tag == "" || tag == "-" || !t.Field(i).IsExported() {
				continue
			}
			if key, f, ok := firstNonFinite(v.Field(i), joinKey(prefix, tag)); ok {
				return key, f, true
			}
		}
	}
	return "", 0, false
}

// kineticsRange is the allowed range of one [kinetics] constant.
type kineticsRange struct {
	key      string
	lo, hi   float64
	loOpen   bool // lo itself is not allowed
	zeroOK   bool // 0 (off) is allowed besides the range
	unit     string
	describe string
}

// Ranges of the [kinetics] keys. The bounds are wide (the defaults sit
// orders of magnitude inside them) but finite: with every constant inside,
// the fastest event rate of a voxel is bounded, so a run always advances.
var (
	kineticsTop = []kineticsRange{
		{key: "dissolution_scale", lo: 0, hi: 1000, loOpen: true},
		{key: "nucleation_scale", lo: 0, hi: 1000, loOpen: true},
		{key: "through_product_scale", lo: 0, hi: 1000, loOpen: true},
		{key: "silicate_saturation", lo: 1e-4, hi: 1, unit: "voxels per voxel of pore water"},
		{key: "csh_nucleation_per_um2_h", lo: 0, hi: 100, unit: "per µm² per h"},
		{key: "ch_saturation", lo: 1e-4, hi: 1, unit: "voxels per voxel of pore water"},
		{key: "ch_nucleation_per_um3_h", lo: 0, hi: 100, unit: "per µm³ per h"},
		{key: "attempt_per_h", lo: 1e-3, hi: 1e4, unit: "per h"},
		{key: "product_length_um", lo: 0, hi: 100, unit: "µm"},
		{key: "nucleation_ea_kj_per_mol", lo: 0, hi: 150, unit: "kJ/mol"},
		{key: "product_densify_k", lo: 1, hi: 1000, zeroOK: true, unit: "K"},
		{key: "sulfate_supply_length_um", lo: 0, hi: 100, loOpen: true, unit: "µm"},
		{key: "sulfate_half", lo: 1e-3, hi: 1000},
		{key: "sulfate_hill", lo: 0.1, hi: 20},
		{key: "water_half_porosity", lo: 1e-3, hi: 1},
		{key: "water_exponent", lo: 0.1, hi: 20},
	}
	kineticsPhase = []kineticsRange{
		{key: "velocity_um_per_h", lo: 0, hi: 1000, unit: "µm/h"},
		{key: "through_product", lo: 0, hi: 1},
		{key: "sulfate_factor", lo: 0, hi: 1},
		{key: "ea_kj_per_mol", lo: 0, hi: 150, unit: "kJ/mol"},
	}
)

func (q kineticsRange) check(r *Raw, key string, v float64) error {
	if (q.loOpen && v > q.lo || !q.loOpen && v >= q.lo) && v <= q.hi || q.zeroOK && v == 0 {
		return nil
	}
	val := fmt.Sprintf("%g", v)
	if q.unit != "" {
		val += " " + q.unit
	}
	low := "≥"
	if q.loOpen {
		low = ">"
	}
	if q.zeroOK {
		return r.errAt(key, "%s: must be 0 (off) or between %g and %g", val, q.lo, q.hi)
	}
	return r.errAt(key, "%s: must be %s %g and ≤ %g", val, low, q.lo, q.hi)
}

// checkKinetics checks the [kinetics] keys the config gives, by their
// full dotted names (kinetics.phase.c3s.velocity_um_per_h).
func (c *Config) checkKinetics() error {
	r := c.located()
	k := &c.Kinetics
	top := map[string]*float64{
		"dissolution_scale": &k.DissolutionScale, "nucleation_scale": &k.NucleationScale,
		"through_product_scale": &k.ThroughProductScale,
		"silicate_saturation":   k.SilicateSaturation, "csh_nucleation_per_um2_h": k.CSHNucleationPerUM2H,
		"ch_saturation": k.CHSaturation, "ch_nucleation_per_um3_h": k.CHNucleationPerUM3H,
		"attempt_per_h": k.AttemptPerH, "product_length_um": k.ProductLengthUM,
		"nucleation_ea_kj_per_mol": k.NucleationEaKJPerMol, "product_densify_k": k.ProductDensifyK,
		"sulfate_supply_length_um": k.SulfateSupplyLengthUM, "sulfate_half": k.SulfateHalf, "sulfate_hill": k.SulfateHill,
		"water_half_porosity": k.WaterHalfPorosity, "water_exponent": k.WaterExponent,
	}
	for _, q := range kineticsTop {
		if p := top[q.key]; p != nil {
			if err := q.check(r, "kinetics."+q.key, *p); err != nil {
				return err
			}
		}
	}
	names := make([]string, 0, len(k.Phase))
	for name := range k.Phase {
		names = append(names, name)
	}
	sort.Strings(names)
	for _, name := range names {
		ph := k.Phase[name]
		vals := map[string]*float64{"velocity_um_per_h": ph.VelocityUMPerH, "through_product": ph.ThroughProduct,
			"sulfate_factor": ph.SulfateFactor, "ea_kj_per_mol": ph.EaKJPerMol}
		for _, q := range kineticsPhase {
			if p := vals[q.key]; p != nil {
				if err := q.check(r, "kinetics.phase."+name+"."+q.key, *p); err != nil {
					return err
				}
			}
		}
	}
	return nil
}

// kineticsKey turns a key named by the kinetics package's own checks
// (kinetics.c3s.through_product) into the config's dotted key
// (kinetics.phase.c3s.through_product).
func kineticsKey(key string) string {
	parts := strings.Split(key, ".")
	if len(parts) == 3 && parts[0] == "kinetics" && parts[1] != "phase" {
		return "kinetics.phase." + parts[1] + "." + parts[2]
	}
	return key
}

// MaxSamples bounds the rows of samples.csv (curing.until_h over
// output.sample_every_h) and MaxOutputAges the output ages: every sample
// is a row kept in memory and every output age a connectivity analysis,
// so a 100 000 h run sampled every 0.01 h (10⁷ rows, gigabytes) is
// refused rather than left to fill memory.
const (
	MaxSamples    = 200000
	MaxOutputAges = 10000
)

// checkCounts refuses sample and output-age counts above the bounds.
func (c *Config) checkCounts() error {
	r := c.located()
	if n := c.Curing.UntilH / c.Output.SampleEveryH; n > MaxSamples {
		return r.errAt("output.sample_every_h", "%g h to %g h gives %.0f samples: at most %d; give at least %.3g h", c.Output.SampleEveryH, c.Curing.UntilH, n, MaxSamples, c.Curing.UntilH/MaxSamples)
	}
	if n := len(c.Output.TimesH); n > MaxOutputAges {
		return r.errAt("output.times_h", "%d ages: at most %d", n, MaxOutputAges)
	}
	return nil
}
