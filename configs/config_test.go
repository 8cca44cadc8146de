package configs

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// goodConfig is a small valid config; bad cases edit it.
const goodConfig = `seed = 2
[cement]
phases = { c3s = 58.0, c2s = 17.0, c3a = 7.5, c4af = 10.5, gypsum = 5.0, calcite = 2.0 }
[psd]
rosin_rammler = { x_um = 8.0, n = 1.1 }
[mix]
w_c = 0.45
[box]
voxels = 30
voxel_um = 1.0
[curing]
mode = "saturated"
temperature_c = 20.0
until_h = 48.0
[output]
times_h = [1, 2, 24]
`

// fuzzEdits seed FuzzConfig: edits of goodConfig that make it bad.
var fuzzEdits = [][2]string{
	{"w_c = 0.45", "w_c = 0"},
	{"w_c = 0.45", "w_c = -0.3"},
	{"c3s = 58.0", "c3s = 28.0"},
	{"calcite = 2.0", "calcite = -2.0"},
	{"calcite = 2.0", "slag = 2.0"},
	{"w_c = 0.45", "w_c = 0.45\nwater_kg = 3"},
	{"[box]", "[boxx]\nvoxels = 3\n[box]"},
	{"phases = { c3s = 58.0, c2s = 17.0, c3a = 7.5, c4af = 10.5, gypsum = 5.0, calcite = 2.0 }", "oxides = { cao = 70.0, sio2 = 17.0, al2o3 = 4.0, fe2o3 = 3.0, so3 = 2.0 }"},
	{"x_um = 8.0", "x_um = 80.0"},
	{"voxels = 30", "voxels = 4"},
	{"voxels = 30", "voxels = 100000"},
	{"voxel_um = 1.0", "voxel_um = 0.0"},
	{"voxel_um = 1.0", "voxel_um = -1.0"},
	{"w_c = 0.45", "w_c = = 0.45"},
	{"voxels = 30", `voxels = "thirty"`},
	{"[psd]", "oxides = { cao = 64.0, sio2 = 20.5, al2o3 = 5.1, fe2o3 = 3.0, so3 = 2.6 }\n[psd]"},
	{`mode = "saturated"`, `mode = "wet"`},
	{"times_h = [1, 2, 24]", "times_h = [1, 2, 96]"},
	{"times_h = [1, 2, 24]", "times_h = [1, 1, 24]"},
	{"n = 1.1", "n = 0.0"},
	{"phases = { c3s = 58.0, c2s = 17.0, c3a = 7.5, c4af = 10.5, gypsum = 5.0, calcite = 2.0 }", "oxides = { cao = 64.0, sio2 = 20.5, al2o3 = 5.1, fe2o3 = 3.0, so3 = 2.6 }\nsulfate = { gypsum = 0.5 }"},
}

func TestSetOverrides(t *testing.T) {
	cfg, err := Load("", []string{"mix.w_c=0.38", "psd.rosin_rammler.x_um=10", `curing.mode="sealed"`, "curing.mode=sealed", "seed=99", "box.voxels=60"})
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Mix.WC != 0.38 || cfg.PSD.RosinRammler.XUM != 10 || cfg.Curing.Mode != "sealed" || cfg.Seed != 99 || cfg.Box.Voxels != 60 {
		t.Fatalf("overrides not applied: %+v", cfg)
	}
	// an override replacing the PSD form
	cfg, err = Load("", []string{"psd.rosin_rammler.n=0.9", "cement.phases.calcite=0", "cement.phases.c3s=60"})
	if err != nil {
		t.Fatal(err)
	}
	if cfg.PSD.RosinRammler.N != 0.9 || cfg.Cement.Phases["c3s"] != 60 {
		t.Fatalf("nested overrides: %+v", cfg.Cement.Phases)
	}
	if _, err := Load("", []string{"mix"}); err == nil {
		t.Fatal("KEY without =VALUE accepted")
	}
	if _, err := Load("", []string{"mix.w_c.x=1"}); err == nil {
		t.Fatal("sub-key of a value accepted")
	}
}

func TestConfigDefaults(t *testing.T) {
	// keys a config leaves out keep Defaults
	dir := t.TempDir()
	p := filepath.Join(dir, "min.toml")
	os.WriteFile(p, []byte("[cement]\nphases = { c3s = 70, c2s = 25, gypsum = 5 }\n[psd]\nrosin_rammler = { x_um = 10, n = 1 }\n[mix]\nw_c = 0.5\n"), 0o644)
	cfg, err := Load(p, nil)
	if err != nil {
		t.Fatal(err)
	}
	d := Defaults()
	// The default output ages past the default end (90 d > 28 d) are
	// dropped, silently: the config did not ask for them.
	if cfg.Box != d.Box || cfg.Curing != d.Curing || cfg.Pack != d.Pack || len(cfg.Output.TimesH) != len(d.Output.TimesH)-1 || len(cfg.DroppedAgesH) != 0 {
		t.Fatalf("defaults not kept: %+v", cfg)
	}
}

func FuzzConfig(f *testing.F) {
	f.Add(goodConfig)
	f.Add(string(Default()))
	for _, e := range fuzzEdits {
		f.Add(strings.Replace(goodConfig, e[0], e[1], 1))
	}
	f.Fuzz(func(t *testing.T, s string) {
		raw, err := ParseRaw("fuzz.toml", ".", []byte(s))
		if err != nil {
			if _, ok := err.(*InputError); !ok {
				t.Fatalf("parse error of type %T", err)
			}
			return
		}
		cfg, err := raw.Decode()
		if err != nil {
			if _, ok := err.(*InputError); !ok {
				t.Fatalf("decode error of type %T: %v", err, err)
			}
			return
		}
		if err := cfg.Validate(); err != nil {
			if _, ok := err.(*InputError); !ok {
				t.Fatalf("validate error of type %T", err)
			}
			if strings.Contains(err.Error(), "\n") {
				t.Fatalf("multi-line error %q", err)
			}
		}
	})
}

// An InputError is one line FILE:LINE: KEY: MSG, leaving out what is not
// known; with nothing but a message it is the message.
func TestInputErrorText(t *testing.T) {
	for _, c := range []struct {
		e    InputError
		want string
	}{
		{InputError{File: "a.toml", Line: 3, Key: "mix.w_c", Msg: "bad"}, "a.toml:3: mix.w_c: bad"},
		{InputError{File: "a.toml", Msg: "bad"}, "a.toml: bad"},
		{InputError{File: "--set", Key: "x", Msg: "bad"}, "--set: x: bad"},
		{InputError{Msg: "sweep: bad"}, "sweep: bad"},
	} {
		if got := c.e.Error(); got != c.want {
			t.Errorf("%+v: %q, want %q", c.e, got, c.want)
		}
	}
}

// A config built in Go, not read from a file, still gets located errors:
// they name its Source.
func TestValidateGoConfig(t *testing.T) {
	cfg := Defaults()
	cfg.Source = "mine"
	err := cfg.Validate()
	if err == nil || err.Error() != "mine: cement: missing: give cement.phases or cement.oxides (mass percent)" {
		t.Errorf("Validate of a config without a cement: %v", err)
	}
	if cfg.Raw() != nil {
		t.Error("a config built in Go has a Raw tree")
	}
	r, err := LoadRaw("")
	if err != nil {
		t.Fatal(err)
	}
	c := r.Clone()
	if err := c.Set("mix.w_c=0.3"); err != nil {
		t.Fatal(err)
	}
	if r.Tree["mix"].(map[string]any)["w_c"] == 0.3 {
		t.Error("Clone shares its tree with the original")
	}
}
