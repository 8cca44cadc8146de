package configs

import (
	"reflect"
	"strings"
	"testing"
)

// The packing keys of earlier versions are refused as unknown, naming the
// keys that replace them.
func TestOldPackKeysRefused(t *testing.T) {
	for _, c := range []struct{ set, want string }{
		{"pack.gap_voxels=1", "grain_spacing_um"},
		{"pack.one_phase_per_particle=true", "clinker_grains"},
		{"pack.correlation_um=3", "phase_domain_um"},
	} {
		_, err := Load("", []string{c.set})
		if err == nil || !strings.Contains(err.Error(), "unknown key") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("--set %s: %v, want unknown key naming %s", c.set, err, c.want)
		}
	}
}

// The box edge of the default is a multiple of 32 (the multigrid halves
// it five times) and the embedded default and every example load.
func TestDefaultBoxAndExamples(t *testing.T) {
	if n := Defaults().Box.Voxels; n%32 != 0 {
		t.Errorf("default box edge %d is not a multiple of 32", n)
	}
	cfg, err := Load("", nil)
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Box.Voxels != 96 || cfg.Pack.ClinkerGrains != Polymineral || cfg.Pack.PhaseDomainUM != 3 || cfg.Pack.GrainSpacingUM != 0 {
		t.Errorf("embedded default box/pack: %+v %+v", cfg.Box, cfg.Pack)
	}
	for _, name := range []string{"rw-f-oxides.toml", "rw-g-psd-table.toml", "rw-g-sealed-low-wc.toml"} {
		if _, err := Load(name, nil); err != nil {
			t.Errorf("%s: %v", name, err)
		}
	}
}

// pack.grain_spacing_um in voxels: the nearest whole number, halves up.
func TestSpacingVoxels(t *testing.T) {
	for _, c := range []struct {
		um, voxelUM float64
		want        int
	}{
		{0, 1, 0}, {0.5, 1, 1}, {1.4, 1, 1}, {1.5, 1, 2}, {2, 1, 2},
		{0.3, 0.1, 3}, {0.7, 0.1, 7}, {1, 0.5, 2}, {0.25, 0.5, 1},
	} {
		if got := (Pack{GrainSpacingUM: c.um}).SpacingVoxels(c.voxelUM); got != c.want {
			t.Errorf("%g µm at %g µm voxels: %d voxels, want %d", c.um, c.voxelUM, got, c.want)
		}
	}
	if _, err := Load("", []string{"pack.grain_spacing_um=0.4"}); err == nil || !strings.Contains(err.Error(), "rounds to 0 voxels") {
		t.Errorf("0.4 µm at 1 µm voxels: %v, want refused", err)
	}
	if _, err := Load("", []string{"pack.grain_spacing_um=5.0"}); err != nil {
		t.Errorf("5 µm at 1 µm voxels: %v", err)
	}
}

// Output ages past the end of the run are dropped and listed, whether the
// end is the default's or given; diffusivity ages past it go too.
func TestDroppedAges(t *testing.T) {
	cfg, err := Load("", []string{"curing.until_h=48"})
	if err != nil {
		t.Fatal(err)
	}
	if want := []float64{1, 2, 4, 8, 12, 24, 48}; !reflect.DeepEqual(cfg.Output.TimesH, want) {
		t.Errorf("times_h %v, want %v", cfg.Output.TimesH, want)
	}
	if want := []float64{72, 168, 672}; !reflect.DeepEqual(cfg.DroppedAgesH, want) {
		t.Errorf("dropped %v, want %v", cfg.DroppedAgesH, want)
	}
	cfg, err = Load("", []string{"curing.until_h=100", "output.diffusivity_times_h=[24, 168]"})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(cfg.Output.DiffusivityTimesH, []float64{24}) || !reflect.DeepEqual(cfg.DroppedAgesH, []float64{168, 672}) {
		t.Errorf("diffusivity %v, dropped %v", cfg.Output.DiffusivityTimesH, cfg.DroppedAgesH)
	}
	cfg, err = Load("", nil)
	if err != nil || len(cfg.DroppedAgesH) != 0 {
		t.Errorf("default: %v, dropped %v", err, cfg.DroppedAgesH)
	}
}
