package configs

import (
	"errors"
	"strings"
	"testing"
)

// blendSets turns the embedded default into a 10 % silica-fume blend at
// w/b 0.45.
var blendSets = []string{"mix.w_c=0", "mix.w_b=0.45", `scm.0.kind="silica_fume"`, "scm.0.mass_percent=10"}

// A blend is given with [[scm]] and mix.w_b; --set reaches the SCMs by
// index, and a new index adds an entry.
func TestSCMConfig(t *testing.T) {
	c, err := Load("", append(blendSets, `scm.1.kind="slag"`, "scm.1.mass_percent=30", "scm.0.mass_percent=5"))
	if err != nil {
		t.Fatal(err)
	}
	if len(c.SCM) != 2 || c.SCM[0].MassPercent != 5 || c.SCM[1].Kind != "slag" || c.Mix.WC != 0.45 || c.Mix.WB != 0.45 {
		t.Fatalf("config %+v, mix %+v", c.SCM, c.Mix)
	}
	if !c.SCM[0].SubVoxel() || c.SCM[1].SubVoxel() {
		t.Error("silica fume should default to sub-voxel powder, slag to particles")
	}
	if a := c.SCM[1].Amorphous(); a != 0.95 {
		t.Errorf("slag amorphous share %g, want the typical 0.95", a)
	}
	// Without SCMs w_b and w_c mean the same.
	c, err = Load("", []string{"mix.w_c=0", "mix.w_b=0.5"})
	if err != nil || c.Mix.WC != 0.5 {
		t.Errorf("w_b without SCMs: %v, w_c %v", err, c.Mix.WC)
	}
}

// Bad blends are one-line InputErrors that name the key and the allowed
// range or values.
func TestSCMConfigRefused(t *testing.T) {
	for _, c := range []struct {
		sets []string
		key  string
		want string
	}{
		{[]string{"mix.w_c=0.45", "mix.w_b=0.40", `scm.0.kind="slag"`, "scm.0.mass_percent=30"}, "mix.w_c", "give mix.w_b"},
		{[]string{"mix.w_c=0", `scm.0.kind="slag"`, "scm.0.mass_percent=30"}, "mix.w_b", "missing"},
		{append(blendSets[:2:2], `scm.0.kind="flour"`, "scm.0.mass_percent=10"), "scm.0.kind", "silica_fume, fly_ash, slag, metakaolin"},
		{append(blendSets[:2:2], `scm.0.kind="slag"`, "scm.0.mass_percent=85"), "scm.0.mass_percent", "between 0 and 80"},
		{append(blendSets[:2:2], `scm.0.kind="slag"`, "scm.0.mass_percent=-1"), "scm.0.mass_percent", "between 0 and 80"},
		{append(blendSets[:2:2], `scm.0.kind="slag"`, "scm.0.mass_percent=nan"), "scm.0.mass_percent", ""},
		{append(blendSets[:2:2], `scm.0.kind="slag"`, "scm.0.mass_percent=50", `scm.1.kind="fly_ash"`, "scm.1.mass_percent=40"), "scm", "at most 80"},
		{append(blendSets[:2:2], `scm.0.kind="slag"`, "scm.0.mass_percent=20", `scm.1.kind="slag"`, "scm.1.mass_percent=10"), "scm.1.kind", "twice"},
		{append(blendSets, "scm.0.amorphous_percent=0"), "scm.0.amorphous_percent", "cannot react"},
		{append(blendSets, `scm.0.representation="dust"`), "scm.0.representation", `"particles" or "subvoxel"`},
		{append(blendSets, "scm.0.psd={ rosin_rammler = { x_um = 0.001, n = 1 } }"), "scm.0.psd.rosin_rammler.x_um", "between 0.01 and 1000"},
		{append(blendSets, "scm.4.kind=\"slag\""), "scm.4.kind", "index 4"},
	} {
		_, err := Load("", c.sets)
		var ie *InputError
		if !errors.As(err, &ie) {
			t.Errorf("%v: %v, want an InputError", c.sets, err)
			continue
		}
		if ie.Key != c.key || !strings.Contains(err.Error(), c.want) || strings.Contains(err.Error(), "\n") {
			t.Errorf("%v:\n  got  %q (key %q)\n  want key %q and %q, one line", c.sets, err, ie.Key, c.key, c.want)
		}
	}
}

// In a file, a bad [[scm]] key is located at its own line.
func TestSCMErrorLine(t *testing.T) {
	raw, err := ParseRaw("blend.toml", ".", []byte(`[cement]
phases = { c3s = 60, c2s = 20, c3a = 8, c4af = 7, gypsum = 5 }
[psd]
rosin_rammler = { x_um = 14, n = 1.05 }
[mix]
w_b = 0.45
[[scm]]
kind = "slag"
mass_percent = 30
[[scm]]
kind = "fly_ash"
mass_percent = 95
`))
	if err != nil {
		t.Fatal(err)
	}
	_, err = FromRaw(raw, nil)
	var ie *InputError
	if !errors.As(err, &ie) || ie.Line != 12 || ie.Key != "scm.1.mass_percent" {
		t.Fatalf("%v (line %d): want scm.1.mass_percent at line 12", err, ie.Line)
	}
}
