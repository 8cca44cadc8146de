package configs

import (
	"bytes"
	"errors"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"gelspace/configs/fuzzmut"
)

// Fuzz targets of the config parsers: the whole load (TOML, --set-free
// decode, defaults, every range check, the files a config names) and the
// temperature schedule CSV. `go test` runs their seeds; `go test -fuzz
// FuzzConfigLoad ./configs` explores further; GELSPACE_LONG=1 runs each
// body a million times on deterministic mutations of the seeds.

// fuzzDir holds the files the seed configs name (psd.csv, sched.csv).
func fuzzDir(t testing.TB) string {
	d := t.TempDir()
	os.WriteFile(filepath.Join(d, "psd.csv"), []byte("size_um,passing_percent\n1,5\n2,12\n4,25\n8,45\n16,70\n32,92\n40,100\n"), 0o644)
	os.WriteFile(filepath.Join(d, "sched.csv"), []byte("time_h,temperature_c\n0,20\n6,35\n24,35\n"), 0o644)
	return d
}

func configSeeds(t testing.TB) [][]byte {
	out := [][]byte{[]byte(goodConfig), Default()}
	for _, e := range fuzzEdits {
		out = append(out, []byte(strings.Replace(goodConfig, e[0], e[1], 1)))
	}
	files, _ := fs.Glob(FS, "*.toml")
	for _, f := range files {
		data, _ := FS.ReadFile(f)
		out = append(out, data)
	}
	more := [][2]string{
		{"rosin_rammler = { x_um = 8.0, n = 1.1 }", `table = "psd.csv"`},
		{"until_h = 48.0", "until_h = 48.0\ntemperature_mode = \"schedule\"\nschedule = \"sched.csv\""},
		{"until_h = 48.0", "until_h = 48.0\ntemperature_mode = \"adiabatic\"\nheat_capacity_j_per_k_per_g_cement = 2.5"},
		{"[output]", "[kinetics]\ndissolution_scale = 1.2\nsilicate_saturation = 0.01\n[kinetics.phase.c3s]\nvelocity_um_per_h = 0.1\nthrough_product = 0.5\n[output]"},
		{"[output]", "[pack]\nclinker_grains = \"monomineral\"\ngrain_spacing_um = 1\n[output]"},
		{"times_h = [1, 2, 24]", "times_h = [1, 2, 24]\nsample_every_h = 0.5\ndiffusivity_times_h = [24]"},
	}
	for _, e := range more {
		out = append(out, []byte(strings.Replace(goodConfig, e[0], e[1], 1)))
	}
	return out
}

// fuzzConfigLoad: a config is refused with one *InputError line, or
// loads into a config that passes Validate again, holds only finite
// numbers and keeps the documented ranges.
func fuzzConfigLoad(t testing.TB, dir string, data []byte) {
	bad := func(err error) {
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("error of type %T: %v", err, err)
		}
	}
	raw, err := ParseRaw("fuzz.toml", dir, data)
	if err != nil {
		bad(err)
		return
	}
	cfg, err := FromRaw(raw, nil)
	if err != nil {
		bad(err)
		return
	}
	if err := cfg.Validate(); err != nil {
		t.Errorf("a loaded config fails Validate: %v", err)
	}
	if key, v, ok := firstNonFinite(reflect.ValueOf(*cfg), ""); ok {
		t.Errorf("loaded config holds %s = %g", key, v)
	}
	switch {
	case !(cfg.Mix.WC >= minWC && cfg.Mix.WC <= maxWC):
		t.Errorf("loaded w/c %g", cfg.Mix.WC)
	case cfg.Box.Voxels < minVoxels || cfg.Box.Voxels > maxVoxelsUI:
		t.Errorf("loaded box of %d voxels", cfg.Box.Voxels)
	case !(cfg.Curing.UntilH > 0 && cfg.Curing.UntilH <= MaxUntilH):
		t.Errorf("loaded until_h %g", cfg.Curing.UntilH)
	}
	for i, x := range cfg.Output.TimesH {
		if x > cfg.Curing.UntilH || i > 0 && !(x > cfg.Output.TimesH[i-1]) {
			t.Errorf("loaded output ages %v to %g h", cfg.Output.TimesH, cfg.Curing.UntilH)
			break
		}
	}
	set, err := cfg.EngineSettings()
	if err != nil {
		t.Errorf("loaded config has no engine settings: %v", err)
		return
	}
	if err := set.Params.Validate(); err != nil {
		t.Errorf("loaded config gives invalid engine parameters: %v", err)
	}
}

func FuzzConfigLoad(f *testing.F) {
	for _, s := range configSeeds(f) {
		f.Add(s)
	}
	dir := fuzzDir(f)
	f.Fuzz(func(t *testing.T, data []byte) { fuzzConfigLoad(t, dir, data) })
}

var scheduleSeeds = [][]byte{
	[]byte("time_h,temperature_c\n0,20\n6,35\n24,35\n"),
	[]byte("# a comment\ntemperature_c, time_h, note\n20, 0, start\n5, 12, cold\n"),
	[]byte("time_h,temperature_c\n0,20\n5,nan\n"),
	[]byte("time_h,temperature_c\n0,20\n3,30\n2,25\n"),
	[]byte("time_h,temperature_c\r\n0,-10\r\n1e5,95\r\n"),
}

// fuzzSchedule: a schedule is refused or gives at least one point, with
// times that start at 0 or later and increase, all ≤ MaxUntilH, and
// finite temperatures between −10 and 95 °C.
func fuzzSchedule(t testing.TB, data []byte) {
	pts, err := parseSchedule("s.csv", bytes.NewReader(data))
	if err != nil {
		if !strings.HasPrefix(err.Error(), "s.csv") {
			t.Errorf("error does not name the file: %v", err)
		}
		return
	}
	if len(pts) == 0 {
		t.Errorf("accepted an empty schedule")
	}
	for i, p := range pts {
		if !(p.TimeH >= 0 && p.TimeH <= MaxUntilH) || i > 0 && !(p.TimeH > pts[i-1].TimeH) || !(p.TempC >= -10 && p.TempC <= 95) {
			t.Errorf("accepted point %d: %g h, %g °C", i, p.TimeH, p.TempC)
			return
		}
		if math.IsNaN(p.TimeH + p.TempC) {
			t.Errorf("accepted NaN at point %d", i)
		}
	}
}

func FuzzSchedule(f *testing.F) {
	for _, s := range scheduleSeeds {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) { fuzzSchedule(t, data) })
}

// TestFuzzLong runs each target's body on a million mutated inputs
// (GELSPACE_FUZZ_N changes the count); GELSPACE_LONG=1 only.
func TestFuzzLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long: set GELSPACE_LONG=1")
	}
	n := fuzzmut.Execs(1_000_000)
	dir := fuzzDir(t)
	t.Run("ConfigLoad", func(t *testing.T) {
		t.Parallel()
		fuzzmut.Run(t, 2, configSeeds(t), n, func(data []byte) { fuzzConfigLoad(t, dir, data) })
	})
	t.Run("Schedule", func(t *testing.T) {
		t.Parallel()
		fuzzmut.Run(t, 3, scheduleSeeds, n, func(data []byte) { fuzzSchedule(t, data) })
	})
}

// TestEveryKineticsKeyRanged: every number of [kinetics] and of
// [kinetics.phase.<key>] has a finite range in validate.go, so that a new
// key cannot arrive unchecked (an unbounded rate or a vanishing
// saturation stops the clock), and a value far outside each range is
// refused naming the key.
func TestEveryKineticsKeyRanged(t *testing.T) {
	ranged := map[string]bool{}
	for _, q := range kineticsTop {
		ranged[q.key] = true
	}
	phase := map[string]bool{}
	for _, q := range kineticsPhase {
		phase[q.key] = true
	}
	for _, c := range []struct {
		t    reflect.Type
		have map[string]bool
		pre  string
	}{{reflect.TypeOf(Kinetics{}), ranged, "kinetics."}, {reflect.TypeOf(PhaseKinetics{}), phase, "kinetics.phase.c3s."}} {
		for i := 0; i < c.t.NumField(); i++ {
			f := c.t.Field(i)
			k := f.Type.Kind()
			if k == reflect.Pointer {
				k = f.Type.Elem().Kind()
			}
			if k != reflect.Float64 {
				continue
			}
			key := f.Tag.Get("toml")
			if !c.have[key] {
				t.Errorf("%s%s has no range in validate.go", c.pre, key)
				continue
			}
			for _, v := range []string{"1e300", "-1e300"} {
				_, err := Load("", []string{c.pre + key + "=" + v})
				if err == nil || !strings.Contains(err.Error(), c.pre+key) {
					t.Errorf("%s%s = %s: %v", c.pre, key, v, err)
				}
			}
		}
	}
}
