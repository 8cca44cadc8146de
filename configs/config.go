package configs

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"sort"
	"strings"

	"gelspace/kinetics"
)

// Config is a run's settings, as read from a TOML file (keys in the toml
// tags). Absent keys keep the values of Defaults. Add a key by adding a
// field with its tag and a check in Validate.
type Config struct {
	Seed   int64  `toml:"seed"` // random seed, ≥ 0
	Cement Cement `toml:"cement"`
	PSD    PSD    `toml:"psd"`
	Mix    Mix    `toml:"mix"`
	Box    Box    `toml:"box"`
	Pack   Pack   `toml:"pack"`
	Curing Curing `toml:"curing"`
	Output Output `toml:"output"`

	Kinetics Kinetics `toml:"kinetics"`

	// SCM lists the supplementary cementitious materials of a blended
	// binder ([[scm]], in order; --set reaches them as scm.0.…).
	SCM []SCM `toml:"scm"`

	// DroppedAgesH are the output ages, h, of output.times_h and
	// output.diffusivity_times_h that lie past curing.until_h and were
	// dropped when the config was loaded (sorted as given; the command
	// lists them).
	DroppedAgesH []float64 `toml:"-"`

	Source string `toml:"-"` // where the config came from, for messages
	Dir    string `toml:"-"` // folder that relative paths are read from
	raw    *Raw
}

// CementConfig describes the powder: phases OR oxides, in mass percent.
type Cement struct {
	Name string `toml:"name"` // label for reports

	// Phases: mass percent by phase key (c3s, c2s, c3a, c4af, gypsum,
	// hemihydrate, anhydrite, calcite, inert); normalised to 100.
	Phases map[string]float64 `toml:"phases"`

	// Oxides: mill-certificate analysis (cao, sio2, al2o3, fe2o3, so3,
	// free_cao, mgo); phases come from Bogue.
	Oxides map[string]float64 `toml:"oxides"`

	// Sulfate: how the SO3 of an oxide analysis is carried, as shares of
	// SO3 (gypsum, hemihydrate, anhydrite; summing to 1). Absent: all
	// gypsum.
	Sulfate map[string]float64 `toml:"sulfate"`
}

// RosinRammlerConfig holds the Rosin–Rammler parameters.
type RosinRammler struct {
	XUM float64 `toml:"x_um"` // characteristic size x′, µm
	N   float64 `toml:"n"`    // uniformity
}

// PSDConfig is the particle size distribution: rosin_rammler OR table.
type PSD struct {
	RosinRammler *RosinRammler `toml:"rosin_rammler"`
	Table        string        `toml:"table"` // CSV size_um,passing_percent, relative to the config
}

// MixConfig holds the proportions.
type Mix struct {
	// WC is the water-to-cement mass ratio; for a blend (any [[scm]]) the
	// config gives WB instead, and after Validate WC holds the same value:
	// everywhere in gelspace it is the water per gram of the whole powder.
	WC float64 `toml:"w_c"`
	// WB is the water-to-binder mass ratio (binder = cement + every SCM).
	WB float64 `toml:"w_b"`
}

// BoxConfig is the voxel box.
type Box struct {
	Voxels  int     `toml:"voxels"`   // edge length in voxels
	VoxelUM float64 `toml:"voxel_um"` // voxel edge in µm
}

// PackConfig steers the packing of the initial microstructure.
type Pack struct {
	// PhaseDomainUM is the size of the phase domains inside polymineral
	// clinker grains, µm.
	PhaseDomainUM float64 `toml:"phase_domain_um" json:"phase_domain_um"`
	// ClinkerGrains is the grains' mineralogy: "polymineral" (C3S, C2S,
	// C3A and C4AF share every grain in domains of PhaseDomainUM) or
	// "monomineral" (every clinker grain a single phase).
	ClinkerGrains string `toml:"clinker_grains" json:"clinker_grains"`
	// GrainSpacingUM is the least water layer kept between grains, µm
	// (dispersed); 0 lets grains touch (flocculated). The packing counts
	// it in voxels: SpacingVoxels.
	GrainSpacingUM float64 `toml:"grain_spacing_um" json:"grain_spacing_um"`
}

// Clinker-grain mineralogies, the values of pack.clinker_grains.
const (
	Polymineral = "polymineral"
	Monomineral = "monomineral"
)

// SpacingVoxels is pack.grain_spacing_um in whole voxels of voxelUM: the
// nearest whole number, halves rounded up (math.Round), so 0.5 µm at
// 1 µm voxels is 1 voxel and 1.4 µm is 1. Validate refuses a non-zero
// spacing that rounds to 0.
func (p Pack) SpacingVoxels(voxelUM float64) int {
	return int(math.Round(p.GrainSpacingUM / voxelUM))
}

// CuringConfig is the curing regime.
type Curing struct {
	Mode         string  `toml:"mode"`          // "saturated" or "sealed"
	TemperatureC float64 `toml:"temperature_c"` // isothermal temperature, °C
	UntilH       float64 `toml:"until_h"`       // age at which the run stops, h
	// TemperatureMode is "isothermal" (default), "schedule" (Schedule, a
	// CSV of time_h, temperature_c) or "adiabatic" (the paste's own heat
	// raises its temperature from temperature_c).
	TemperatureMode string `toml:"temperature_mode"`
	Schedule        string `toml:"schedule"`
	// HeatCapacityJPerKPerGCement is, for the adiabatic mode, the heat
	// capacity of everything that warms with the paste, per gram of cement:
	// 0 means the paste alone (0.75 + w/c × 4.18 J/K per g of cement); for
	// a concrete add the aggregate's share (its mass per gram of cement ×
	// about 0.8 J/(g·K)).
	HeatCapacityJPerKPerGCement float64 `toml:"heat_capacity_j_per_k_per_g_cement"`
}

// OutputConfig says what to record.
type Output struct {
	TimesH []float64 `toml:"times_h"` // ages of the output rows, h
	// SampleEveryH is the interval of the fine samples (samples.csv, the
	// heat-flow curve), h.
	SampleEveryH float64 `toml:"sample_every_h"`
	// DiffusivityTimesH are the output ages at which D/D0 is computed;
	// empty means the last one only. Diffusivity = false turns it off.
	DiffusivityTimesH []float64 `toml:"diffusivity_times_h"`
	Diffusivity       bool      `toml:"diffusivity"`
	// CapillaryDiffusivity adds, at every D/D0 age, the D/D0 of the
	// capillary pores alone (C-S-H taken as insulating): a second solve
	// while they still span the box, none once they have depercolated.
	CapillaryDiffusivity bool `toml:"capillary_diffusivity"`
	// DiffusivityTol is the relative residual at which the solve stops;
	// the D/D0 it reports is accurate to about its square.
	DiffusivityTol float64 `toml:"diffusivity_tol"`
	// EquivalentAgeEaKJPerMol is the apparent activation energy of the
	// equivalent age at 20 °C (series.csv equivalent_age_h), kJ/mol; 40 by
	// default, the order ASTM C1074 gives for a general-use cement (from
	// memory). It is a reporting constant: the engine's rates keep their
	// own activation energies.
	EquivalentAgeEaKJPerMol float64 `toml:"equivalent_age_ea_kj_per_mol"`
}

// Defaults returns the values of keys a config leaves out. The cement,
// the PSD and mix.w_c have no default: a config must give them.
func Defaults() *Config {
	return &Config{
		Seed:     1,
		Box:      Box{Voxels: 96, VoxelUM: 1},
		Pack:     Pack{PhaseDomainUM: 3, ClinkerGrains: Polymineral},
		Curing:   Curing{Mode: "saturated", TemperatureC: 20, UntilH: 672},
		Output:   Output{TimesH: []float64{1, 2, 4, 8, 12, 24, 48, 72, 168, 672, 2160}, SampleEveryH: 0.25, Diffusivity: true, DiffusivityTol: 1e-5, EquivalentAgeEaKJPerMol: 40},
		Kinetics: defaultKinetics(),
	}
}

// DefaultConfigName names the embedded default in messages.
const DefaultName = "default.toml (embedded)"

// LoadConfig reads the config at path (the embedded default when path is
// ""), applies the KEY=VALUE overrides in sets, in order, and validates
// the result. Errors are *InputError.
func Load(path string, sets []string) (*Config, error) {
	raw, err := LoadRaw(path)
	if err != nil {
		return nil, err
	}
	return FromRaw(raw, sets)
}

// FromRaw applies the overrides in sets to raw, in order, then
// decodes and validates it. Errors are *InputError.
func FromRaw(raw *Raw, sets []string) (*Config, error) {
	for _, s := range sets {
		if err := raw.Set(s); err != nil {
			return nil, err
		}
	}
	cfg, err := raw.Decode()
	if err != nil {
		return nil, err
	}
	cfg.dropPastEnd(raw)
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	return cfg, nil
}

// Raw returns the tree the config was decoded from, or nil for a Config
// built in Go rather than read.
func (c *Config) Raw() *Raw { return c.raw }

// located returns the tree that locates c's keys in messages: the one it
// was decoded from, or an empty one naming c.Source.
func (c *Config) located() *Raw {
	if c.raw != nil {
		return c.raw
	}
	return &Raw{Name: c.Source, lines: map[string]int{}, sets: map[string]string{}}
}

// Errorf returns an InputError about key, located at its line in the
// config file or at the --set override that gave it.
func (c *Config) Errorf(key, format string, args ...any) *InputError {
	return c.located().errAt(key, format, args...)
}

// LoadRaw reads and parses a config file (the embedded default when path
// is "") without checking it.
func LoadRaw(path string) (*Raw, error) {
	if path == "" {
		return ParseRaw(DefaultName, ".", Default())
	}
	data, err := ReadInput(path, "config")
	if err != nil {
		return nil, err
	}
	return ParseRaw(path, filepath.Dir(path), data)
}

// ReadInput reads an input file of at most MaxInputBytes (see
// ReadLimited); a failure is an InputError that says what the file was
// for ("config", "sweep file").
func ReadInput(path, what string) ([]byte, error) {
	return ReadLimited(path, what, MaxInputBytes)
}

// Allowed ranges, checked by Validate.
const (
	minWC, maxWC           = 0.20, 1.50
	minVoxels, maxVoxelsUI = 10, 1000
	minVoxelUM, maxVoxelUM = 0.05, 20.0
	minTempC, maxTempC     = -10.0, 95.0
	// MaxUntilH is the longest run a config may ask for, h (curing.until_h).
	MaxUntilH            = 100000.0
	minCorrUM, maxCorrUM = 0.1, 1000.0
	// maxSpacingVoxels bounds pack.grain_spacing_um, in voxels (as
	// voxel.MaxSpacingVoxels).
	maxSpacingVoxels = 5
	// bytesPerVoxel is the memory a packed box takes: 1 byte of phase and
	// 4 of particle id, and under 1 of working space.
	bytesPerVoxel = 6
)

// Validate checks every key's range and the combinations (phases or
// oxides, rosin_rammler or table). Its errors name the key, its line and
// the allowed range.
func (c *Config) Validate() error {
	r := c.located()
	if err := c.checkNumbers(); err != nil {
		return err
	}
	if c.Seed < 0 {
		return r.errAt("seed", "%d: must be ≥ 0", c.Seed)
	}
	// [cement]
	switch {
	case c.Cement.Phases == nil && c.Cement.Oxides == nil:
		return r.errAt("cement", "missing: give cement.phases or cement.oxides (mass percent)")
	case c.Cement.Phases != nil && c.Cement.Oxides != nil:
		return r.errAt("cement.oxides", "give cement.phases or cement.oxides, not both")
	case c.Cement.Phases != nil:
		if _, err := kinetics.NewComposition(c.Cement.Phases); err != nil {
			return r.errAt(keyOf("cement.phases", err, c.Cement.Phases), "%v", err)
		}
		if c.Cement.Sulfate != nil {
			return r.errAt("cement.sulfate", "applies to cement.oxides only: with cement.phases give the sulfate phases directly")
		}
	default:
		o, err := kinetics.OxidesFromMap(c.Cement.Oxides)
		if err != nil {
			return r.errAt(keyOf("cement.oxides", err, c.Cement.Oxides), "%v", err)
		}
		split, err := kinetics.SulfateSplitFromMap(c.Cement.Sulfate)
		if err != nil {
			return r.errAt(keyOf("cement.sulfate", err, c.Cement.Sulfate), "%v", err)
		}
		if _, _, err := kinetics.CompositionFromOxides(o, split); err != nil {
			return r.errAt("cement.oxides", "%v", err)
		}
	}
	// [psd]
	switch {
	case c.PSD.RosinRammler == nil && c.PSD.Table == "":
		return r.errAt("psd", "missing: give psd.rosin_rammler = { x_um = …, n = … } or psd.table = \"file.csv\"")
	case c.PSD.RosinRammler != nil && c.PSD.Table != "":
		return r.errAt("psd.table", "give psd.rosin_rammler or psd.table, not both")
	case c.PSD.RosinRammler != nil:
		rr := c.PSD.RosinRammler
		if !(rr.XUM > 0 && rr.XUM <= 1000) {
			return r.errAt("psd.rosin_rammler.x_um", "%g µm: must be > 0 and ≤ 1000", rr.XUM)
		}
		if !(rr.N >= 0.3 && rr.N <= 5) {
			return r.errAt("psd.rosin_rammler.n", "%g: must be between 0.3 and 5", rr.N)
		}
	}
	// [[scm]] and [mix]
	if err := c.checkSCM(r); err != nil {
		return err
	}
	if !(c.Mix.WC >= minWC && c.Mix.WC <= maxWC) {
		if c.Mix.WC == 0 {
			return r.errAt("mix.w_c", "missing or 0: must be between %g and %g", minWC, maxWC)
		}
		return r.errAt("mix.w_c", "%g: must be between %g and %g", c.Mix.WC, minWC, maxWC)
	}
	// [box]
	if !(c.Box.VoxelUM >= minVoxelUM && c.Box.VoxelUM <= maxVoxelUM) {
		return r.errAt("box.voxel_um", "%g µm: must be between %g and %g", c.Box.VoxelUM, minVoxelUM, maxVoxelUM)
	}
	limit := maxBoxVoxels()
	if c.Box.Voxels < minVoxels || c.Box.Voxels > limit {
		msg := fmt.Sprintf("%d: must be between %d and %d", c.Box.Voxels, minVoxels, limit)
		if c.Box.Voxels > limit && limit < maxVoxelsUI {
			need := float64(c.Box.Voxels) * float64(c.Box.Voxels) * float64(c.Box.Voxels) * bytesPerVoxel
			msg += fmt.Sprintf(" (packing a box of %d³ voxels needs about %.1f GB, a run much more; %.1f GB of memory is available)", c.Box.Voxels, need/1e9, float64(AvailableBytes())/1e9)
		}
		return r.errAt("box.voxels", "%s", msg)
	}
	// [pack]
	if !(c.Pack.PhaseDomainUM >= minCorrUM && c.Pack.PhaseDomainUM <= maxCorrUM) {
		return r.errAt("pack.phase_domain_um", "%g µm: must be between %g and %g", c.Pack.PhaseDomainUM, minCorrUM, maxCorrUM)
	}
	if c.Pack.ClinkerGrains != Polymineral && c.Pack.ClinkerGrains != Monomineral {
		return r.errAt("pack.clinker_grains", "%q: must be %q or %q", c.Pack.ClinkerGrains, Polymineral, Monomineral)
	}
	if maxSp := maxSpacingVoxels * c.Box.VoxelUM; !(c.Pack.GrainSpacingUM >= 0 && c.Pack.GrainSpacingUM <= maxSp) {
		return r.errAt("pack.grain_spacing_um", "%g µm: must be between 0 and %g (%d voxels of %g µm)", c.Pack.GrainSpacingUM, maxSp, maxSpacingVoxels, c.Box.VoxelUM)
	}
	if c.Pack.GrainSpacingUM > 0 && c.Pack.SpacingVoxels(c.Box.VoxelUM) == 0 {
		return r.errAt("pack.grain_spacing_um", "%g µm rounds to 0 voxels of %g µm: give 0 (touching) or at least %g (half a voxel)", c.Pack.GrainSpacingUM, c.Box.VoxelUM, c.Box.VoxelUM/2)
	}
	// [curing]
	if c.Curing.Mode != "saturated" && c.Curing.Mode != "sealed" {
		return r.errAt("curing.mode", "%q: must be \"saturated\" or \"sealed\"", c.Curing.Mode)
	}
	if !(c.Curing.TemperatureC >= minTempC && c.Curing.TemperatureC <= maxTempC) {
		return r.errAt("curing.temperature_c", "%g °C: must be between %g and %g", c.Curing.TemperatureC, minTempC, maxTempC)
	}
	if !(c.Curing.UntilH > 0 && c.Curing.UntilH <= MaxUntilH) {
		return r.errAt("curing.until_h", "%g h: must be > 0 and ≤ %g", c.Curing.UntilH, MaxUntilH)
	}
	// [output]
	prev := 0.0
	for i, t := range c.Output.TimesH {
		if !(t > prev) || math.IsInf(t, 0) {
			return r.errAt("output.times_h", "entry %d = %g h: times must be > 0 and increasing", i+1, t)
		}
		prev = t
	}
	if !(c.Output.SampleEveryH >= 0.01 && c.Output.SampleEveryH <= 24) {
		return r.errAt("output.sample_every_h", "%g h: must be between 0.01 and 24", c.Output.SampleEveryH)
	}
	if err := c.checkCounts(); err != nil {
		return err
	}
	if !(c.Output.DiffusivityTol >= 1e-10 && c.Output.DiffusivityTol <= 1e-2) {
		return r.errAt("output.diffusivity_tol", "%g: must be between 1e-10 and 1e-2", c.Output.DiffusivityTol)
	}
	if !(c.Output.EquivalentAgeEaKJPerMol >= 10 && c.Output.EquivalentAgeEaKJPerMol <= 100) {
		return r.errAt("output.equivalent_age_ea_kj_per_mol", "%g kJ/mol: must be between 10 and 100", c.Output.EquivalentAgeEaKJPerMol)
	}
	for i, t := range c.Output.DiffusivityTimesH {
		found := t == c.Curing.UntilH
		for _, o := range c.Output.TimesH {
			found = found || o == t
		}
		if !found {
			return r.errAt("output.diffusivity_times_h", "entry %d = %g h: must be one of output.times_h or curing.until_h", i+1, t)
		}
	}
	if _, err := c.EngineSettings(); err != nil {
		return err
	}
	return nil
}

// keyOf picks the sub-key a map error names ("phase \"c2s\" = …") so the
// message points at its line.
func keyOf(table string, err error, m map[string]float64) string {
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		if strings.Contains(err.Error(), fmt.Sprintf("%q", k)) {
			return table + "." + k
		}
	}
	return table
}

// AvailableBytes estimates the memory a box may use: MemAvailable from
// /proc/meminfo, or 4 GB where that cannot be read.
func AvailableBytes() int64 {
	data, err := os.ReadFile("/proc/meminfo")
	if err == nil {
		for _, line := range strings.Split(string(data), "\n") {
			var kb int64
			if n, _ := fmt.Sscanf(line, "MemAvailable: %d kB", &kb); n == 1 && kb > 0 {
				return kb * 1024
			}
		}
	}
	return 4e9
}

// maxBoxVoxels is the largest box edge that fits in memory (and at most
// maxVoxelsUI).
func maxBoxVoxels() int {
	n := int(math.Cbrt(float64(AvailableBytes()) / bytesPerVoxel))
	return min(n, maxVoxelsUI)
}

// knownKeys lists the keys allowed beside an unknown dotted key, from the
// Config struct's toml tags.
func knownKeys(key string) []string {
	parts := strings.Split(key, ".")
	t := reflect.TypeOf(Config{})
	for i := 0; i < len(parts)-1; i++ {
		f, ok := fieldByTag(t, parts[i])
		if !ok {
			break
		}
		ft := f.Type
		if ft.Kind() == reflect.Pointer {
			ft = ft.Elem()
		}
		if ft.Kind() == reflect.Map && i+2 < len(parts) {
			// kinetics.phase.c3s.KEY: the map key (c3s) names an entry
			ft = ft.Elem()
			i++
		}
		if ft.Kind() != reflect.Struct {
			break
		}
		t = ft
	}
	var out []string
	for i := 0; i < t.NumField(); i++ {
		if tag := t.Field(i).Tag.Get("toml"); tag != "" && tag != "-" {
			out = append(out, tag)
		}
	}
	return out
}

func fieldByTag(t reflect.Type, tag string) (reflect.StructField, bool) {
	for i := 0; i < t.NumField(); i++ {
		if t.Field(i).Tag.Get("toml") == tag {
			return t.Field(i), true
		}
	}
	return reflect.StructField{}, false
}
