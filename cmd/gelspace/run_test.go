package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gelspace/cmd/gelspace/run"
	"gelspace/render"
)

// runConfig is a small, fast run: goodConfig (30³ voxels, two days) with
// more output ages.
var runConfig = strings.Replace(goodConfig, "times_h = [1, 2, 24]", "times_h = [1, 2, 4, 8, 12, 24]", 1)

func writeConfig(t *testing.T, text string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "cfg.toml")
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func mustRun(t *testing.T, args ...string) string {
	t.Helper()
	var stdout, stderr bytes.Buffer
	if code := Main(args, &stdout, &stderr); code != 0 {
		t.Fatalf("gelspace %s: exit %d: %s", strings.Join(args, " "), code, stderr.String())
	}
	return stdout.String()
}

// TestRunOutputs checks the files of a run and their contract columns.
func TestRunOutputs(t *testing.T) {
	cfg := writeConfig(t, runConfig)
	out := filepath.Join(t.TempDir(), "run")
	msg := mustRun(t, "run", cfg, "--out", out)
	if !strings.Contains(msg, "hydrated to 48 h") {
		t.Errorf("summary line %q", msg)
	}
	for _, f := range []string{"series.csv", "samples.csv", "summary.json", "final.vti", "final.npy", "phases.csv", "run.json",
		"report.html", "timelapse.gif", "plots/alpha.png", "plots/heat.svg", "plots/calorimetry.png", "plots/calorimetry.svg", "slices/final_cutaway_phase.png"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	if _, err := os.Stat(filepath.Join(out, run.CheckpointFile)); err == nil {
		t.Error("a finished run left its checkpoint")
	}
	f, err := os.Open(filepath.Join(out, "series.csv"))
	if err != nil {
		t.Fatal(err)
	}
	s, err := render.ReadSeriesCSV(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	want := "time_h,temperature_c,alpha,alpha_c3s,alpha_c2s,alpha_c3a,alpha_c4af,alpha_silica_fume,alpha_fly_ash,alpha_slag,alpha_metakaolin,heat_j_per_g,heat_flow_mw_per_g,chem_shrinkage_ml_per_g,water_consumed_g_per_g,nonevaporable_water_g_per_g,capillary_porosity,water_filled_porosity,solids_connected_fraction,solids_span_axes,pores_connected_fraction,pores_span_axes,rel_diffusivity,rel_diffusivity_capillary,formation_factor,equivalent_age_h,gel_space_ratio,gel_porosity,total_porosity,ch_g_per_100g,bound_water_g_per_100g,aft_g_per_100g,afm_g_per_100g,csh_g_per_100g,vol_water"
	if got := strings.Join(s.Columns, ","); !strings.HasPrefix(got, want) {
		t.Errorf("series.csv columns\n%s\nwant prefix\n%s", got, want)
	}
	if len(s.Rows) != 7 { // six output ages and the end
		t.Errorf("series.csv has %d rows, want 7", len(s.Rows))
	}
	var sum map[string]any
	data, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	if err := json.Unmarshal(data, &sum); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"set_time_h", "set_time_h_min", "set_point_note", "set_alpha", "depercolation_time_h", "depercolation_porosity", "initial_solid_fraction", "at_age", "wall_s", "caution",
		"calorimetry", "chloride", "equivalent_age", "bases"} {
		if _, ok := sum[k]; !ok {
			t.Errorf("summary.json lacks %s", k)
		}
	}
	html, _ := os.ReadFile(filepath.Join(out, "report.html"))
	if !bytes.Contains(html, []byte("not substitutes for standard tests")) {
		t.Error("report.html lacks the caution")
	}
}

// errKilled stands for a run stopped from outside after a checkpoint.
var errKilled = errors.New("killed for the test")

// TestResumeIdentical: a run stopped after its first checkpoint and resumed
// writes the same series.csv and samples.csv, byte for byte, as a run that
// never stopped.
func TestResumeIdentical(t *testing.T) {
	cfg := writeConfig(t, runConfig)
	dir := t.TempDir()
	straight, stopped := filepath.Join(dir, "straight"), filepath.Join(dir, "stopped")
	mustRun(t, "run", cfg, "--out", straight, "--no-render", "--quiet")
	afterCheckpoint = func() error { return errKilled }
	var stderr bytes.Buffer
	code := Main([]string{"run", cfg, "--out", stopped, "--no-render", "--quiet", "--checkpoint-every", "6h"}, io.Discard, &stderr)
	afterCheckpoint = nil
	if code == 0 || !strings.Contains(stderr.String(), errKilled.Error()) {
		t.Fatalf("the kill hook did not stop the run: exit %d, %s", code, stderr.String())
	}
	if _, err := os.Stat(filepath.Join(stopped, "series.csv")); err == nil {
		t.Fatal("a stopped run wrote its series")
	}
	mustRun(t, "run", "--resume", stopped, "--quiet")
	for _, f := range []string{"series.csv", "samples.csv"} {
		a, _ := os.ReadFile(filepath.Join(straight, f))
		b, _ := os.ReadFile(filepath.Join(stopped, f))
		if len(a) == 0 || !bytes.Equal(a, b) {
			t.Errorf("%s differs after resume (%d vs %d bytes)", f, len(a), len(b))
		}
	}
	// Same config and seed: the same outputs (summary.json holds wall time,
	// so compare the series).
	again := filepath.Join(dir, "again")
	mustRun(t, "run", cfg, "--out", again, "--no-render", "--quiet")
	a, _ := os.ReadFile(filepath.Join(straight, "samples.csv"))
	b, _ := os.ReadFile(filepath.Join(again, "samples.csv"))
	if !bytes.Equal(a, b) {
		t.Error("two runs of one config differ")
	}
}

// TestRunBadInputs: run-specific bad inputs exit 2 with one line naming
// the file or flag and the allowed values, and write nothing.
func TestRunBadInputs(t *testing.T) {
	dir := t.TempDir()
	sched := filepath.Join(dir, "sched.csv")
	os.WriteFile(sched, []byte("time_h,temperature_c\n0,20\n5,30\n3,35\n"), 0o644)
	notRun := filepath.Join(dir, "not-a-run")
	os.MkdirAll(notRun, 0o755)
	corrupt := filepath.Join(dir, "corrupt")
	os.MkdirAll(corrupt, 0o755)
	cases := []struct {
		name string
		edit [2]string
		args []string
		want []string
	}{
		{"bad temperature mode", [2]string{"temperature_c = 20.0", "temperature_c = 20.0\ntemperature_mode = \"warm\""}, nil,
			[]string{"cfg.toml", "curing.temperature_mode", "isothermal", "adiabatic"}},
		{"schedule without file", [2]string{"temperature_c = 20.0", "temperature_c = 20.0\ntemperature_mode = \"schedule\""}, nil,
			[]string{"curing.schedule", "missing"}},
		{"schedule not increasing", [2]string{"temperature_c = 20.0", "temperature_c = 20.0\ntemperature_mode = \"schedule\"\nschedule = \"" + sched + "\""}, nil,
			[]string{"curing.schedule", "sched.csv", "line 4", "increase"}},
		{"bad kinetics scale", [2]string{"[output]", "[kinetics]\ndissolution_scale = -1\n[output]"}, nil,
			[]string{"cfg.toml", "kinetics.dissolution_scale", "> 0"}},
		{"unknown kinetics phase", [2]string{"[output]", "[kinetics.phase.hydrotalcite]\nvelocity_um_per_h = 1\n[output]"}, nil,
			[]string{"kinetics.phase.hydrotalcite", "not a dissolving phase"}},
		{"bad sample interval", [2]string{"times_h = [1, 2, 4, 8, 12, 24]", "times_h = [1, 2, 4, 8, 12, 24]\nsample_every_h = 0"}, nil,
			[]string{"output.sample_every_h", "between 0.01 and 24"}},
		{"run too large for memory", [2]string{}, []string{"--size", "1000"},
			[]string{"--size", "needs about", "GB", "at most"}},
		{"bad checkpoint interval", [2]string{}, []string{"--checkpoint-every", "often"},
			[]string{"--checkpoint-every", "24h", "10m"}},
		{"resume a folder that is no run", [2]string{}, []string{"--resume", notRun},
			[]string{"run.json", "run folder"}},
		{"resume a corrupt checkpoint", [2]string{}, []string{"--resume", corrupt},
			[]string{"checkpoint.gsck", "corrupt"}},
	}
	// A real run folder whose checkpoint is damaged.
	cfg := writeConfig(t, runConfig)
	afterCheckpoint = func() error { return errKilled }
	Main([]string{"run", cfg, "--out", corrupt, "--no-render", "-q", "--checkpoint-every", "6h"}, io.Discard, io.Discard)
	afterCheckpoint = nil
	ck := filepath.Join(corrupt, run.CheckpointFile)
	data, err := os.ReadFile(ck)
	if err != nil {
		t.Fatal(err)
	}
	data[len(data)/2] ^= 0x55
	os.WriteFile(ck, data, 0o644)

	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			text := runConfig
			if c.edit[0] != "" {
				text = strings.Replace(text, c.edit[0], c.edit[1], 1)
			}
			cfg := writeConfig(t, text)
			out := filepath.Join(t.TempDir(), "out")
			args := []string{"run", cfg, "--out", out, "-q"}
			if len(c.args) > 0 && c.args[0] == "--resume" {
				args = append([]string{"run"}, c.args...)
			} else {
				args = append(args, c.args...)
			}
			var stderr bytes.Buffer
			code := Main(args, io.Discard, &stderr)
			msg := stderr.String()
			if code != 2 {
				t.Fatalf("exit %d, want 2: %s", code, msg)
			}
			if strings.Count(strings.TrimSpace(msg), "\n") != 0 {
				t.Errorf("not one line: %q", msg)
			}
			for _, w := range c.want {
				if !strings.Contains(msg, w) {
					t.Errorf("message %q lacks %q", msg, w)
				}
			}
			if _, err := os.Stat(out); err == nil {
				t.Error("the output folder was created")
			}
		})
	}
}

// TestHydratedPasteConnectivity holds the set point and capillary-pore
// depercolation of hydrated demo pastes (60³ voxels of 1 µm; w/c 0.45 is
// hydrated for 4000 h, long enough to reach the threshold) against
// published behaviour: capillary porosity at depercolation between 0.14
// and 0.24 for w/c 0.35–0.45 (Garboczi & Bentz, J. Mater. Sci. 27 (1992)
// 2083 report about 0.18 — confirmed; the band is the issue's), lower w/c
// depercolating earlier, and w/c 0.70 not depercolating by 28 days (same
// source: above w/c ≈ 0.6 the pores stay connected — confirmed). The set
// point (solids spanning all three axes) comes after the dormant period and
// within the time-of-setting window that ASTM C150 allows a Portland cement
// by the Vicat test, 45 to 375 minutes (from memory; the Vicat test uses a
// paste of standard consistency, so this is a loose check).
func TestHydratedPasteConnectivity(t *testing.T) {
	type result struct {
		set, deperc, porosity *float64
	}
	runWC := func(wc, untilH float64) result {
		cfg := writeConfig(t, fmt.Sprintf(`seed = 5
[cement]
phases = { c3s = 58.0, c2s = 17.0, c3a = 7.5, c4af = 10.5, gypsum = 5.0, calcite = 2.0 }
[psd]
rosin_rammler = { x_um = 14.0, n = 1.05 }
[mix]
w_c = %g
[box]
voxels = 60
[curing]
until_h = %g
[output]
times_h = [1, 2, 4, 8, 12, 24, 72, 168, 336, 672]
diffusivity = false
`, wc, untilH))
		out := filepath.Join(t.TempDir(), "run")
		mustRun(t, "run", cfg, "--out", out, "--no-render", "-q")
		var s run.Summary
		data, _ := os.ReadFile(filepath.Join(out, "summary.json"))
		if err := json.Unmarshal(data, &s); err != nil {
			t.Fatal(err)
		}
		return result{s.SetTimeH, s.DepercolationTimeH, s.DepercolationPorosity}
	}
	prevT := 0.0
	for _, c := range []struct{ wc, until float64 }{{0.35, 672}, {0.40, 1500}, {0.45, 4000}} {
		r := runWC(c.wc, c.until)
		if r.deperc == nil {
			t.Errorf("w/c %.2f: capillary pores still connected after %g h", c.wc, c.until)
			continue
		}
		if p := *r.porosity; p < 0.14 || p > 0.24 {
			t.Errorf("w/c %.2f: depercolation at capillary porosity %.3f, want 0.14–0.24", c.wc, p)
		}
		if *r.deperc <= prevT {
			t.Errorf("w/c %.2f depercolated at %.1f h, not later than the lower w/c (%.1f h)", c.wc, *r.deperc, prevT)
		}
		prevT = *r.deperc
		if r.set == nil || *r.set < 0.75 || *r.set > 6.25 {
			t.Errorf("w/c %.2f: set at %v h, want within 0.75–6.25 h", c.wc, r.set)
		}
	}
	if r := runWC(0.70, 672); r.deperc != nil {
		t.Errorf("w/c 0.70 depercolated at %.1f h, porosity %.3f: it should stay connected at 28 days", *r.deperc, *r.porosity)
	}
}

// TestRunUntil: --until shortens a run and drops the output ages beyond it.
func TestRunUntil(t *testing.T) {
	cfg := writeConfig(t, runConfig)
	out := filepath.Join(t.TempDir(), "short")
	mustRun(t, "run", cfg, "--out", out, "--until", "5", "--no-render", "-q")
	data, err := os.ReadFile(filepath.Join(out, "series.csv"))
	if err != nil {
		t.Fatal(err)
	}
	var ages []string
	for _, line := range strings.Split(strings.TrimSpace(string(data)), "\n")[1:] {
		ages = append(ages, strings.SplitN(line, ",", 2)[0])
	}
	if got := strings.Join(ages, " "); got != "1 2 4 5" {
		t.Errorf("output ages %q, want 1 2 4 5", got)
	}
}

// TestRunUntilDefault: the default config with curing.until_h = 48 (or
// --until 48) runs, and the output ages past 48 h are listed in one line
// on stderr.
func TestRunUntilDefault(t *testing.T) {
	for _, args := range [][]string{{"--set", "curing.until_h=48"}, {"--until", "48"}} {
		out := filepath.Join(t.TempDir(), "short")
		var stdout, stderr bytes.Buffer
		all := append([]string{"run", "--size", "32", "--set", "box.voxel_um=1.5", "--set", "output.diffusivity=false", "--no-render", "-q", "--out", out}, args...)
		if code := Main(all, &stdout, &stderr); code != 0 {
			t.Fatalf("%v: exit %d: %s", args, code, stderr.String())
		}
		want := "gelspace run: output ages past the end of the run (48 h) dropped: 72, 168, 672 h\n"
		if stderr.String() != want {
			t.Errorf("%v: stderr %q, want %q", args, stderr.String(), want)
		}
		var sum struct {
			AtAge []struct {
				Days float64 `json:"days"`
			} `json:"at_age"`
		}
		data, _ := os.ReadFile(filepath.Join(out, "summary.json"))
		if err := json.Unmarshal(data, &sum); err != nil {
			t.Fatal(err)
		}
		if len(sum.AtAge) != 2 || sum.AtAge[0].Days != 1 || sum.AtAge[1].Days != 2 {
			t.Errorf("%v: at_age %+v, want 1 and 2 days", args, sum.AtAge)
		}
	}
}
