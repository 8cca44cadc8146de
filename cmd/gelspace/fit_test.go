package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gelspace/cmd/gelspace/fit"
	"gelspace/configs"
)

// Bad curves exit 2 with one line naming the file, the line and the rule.
func TestFitBadCurves(t *testing.T) {
	dir := t.TempDir()
	for _, c := range []struct{ name, text, want string }{
		{"not monotone", "time_h,heat_j_per_g\n1,2\n2,10\n4,40\n8,35\n12,120\n24,200\n", "bad.csv:5: heat_j_per_g = 35 after 40: a cumulative curve must not decrease"},
		{"too few", "time_h,alpha\n1,0.01\n2,0.02\n4,0.1\n8,0.2\n", "bad.csv: 4 rows: a fit of three multipliers needs at least 5"},
		{"no value column", "time_h,temperature_c\n1,20\n", "bad.csv:1: header \"time_h,temperature_c\": want time_h and one of"},
		{"times back", "time_h,alpha\n1,0.01\n2,0.02\n2,0.1\n8,0.2\n9,0.3\n", "bad.csv:4: time_h = 2 after 2: times must increase"},
		{"alpha over 1", "time_h,alpha\n1,0.01\n2,1.5\n", "bad.csv:3: alpha = 1.5: must be between 0 and 1"},
		{"not a number", "time_h,alpha\n1,x\n", "bad.csv:2: time_h and alpha must be numbers"},
	} {
		p := filepath.Join(dir, "bad.csv")
		os.WriteFile(p, []byte(c.text), 0o644)
		var o, e bytes.Buffer
		code := Main([]string{"fit", p, "--out", filepath.Join(dir, "out")}, &o, &e)
		if code != 2 || !strings.Contains(e.String(), c.want) || strings.Count(e.String(), "\n") != 1 {
			t.Errorf("%s: exit %d, %q; want 2 and %q", c.name, code, e.String(), c.want)
		}
	}
	var o, e bytes.Buffer
	if code := Main([]string{"fit", filepath.Join(dir, "none.csv")}, &o, &e); code != 2 || !strings.Contains(e.String(), "no such file") {
		t.Errorf("missing file: exit %d, %s", code, e.String())
	}
}

// fitSyntheticTimes are the rows of a synthetic curve: half-hourly to
// 72 h, then every 2 h to untilH (a calorimeter left running for weeks,
// so that the through-product tail is in the curve).
func fitSyntheticTimes(untilH float64) []float64 {
	var times []float64
	for h := 0.5; h <= min(72, untilH); h += 0.5 {
		times = append(times, h)
	}
	for h := 74.0; h <= untilH; h += 2 {
		times = append(times, h)
	}
	return times
}

// fitRecoveryTol is the relative error allowed on a recovered dissolution
// multiplier.
const fitRecoveryTol = 0.10

// fitThroughTol is the relative error allowed on the recovered
// through-product multiplier. Since the engine slows dissolution as the
// water-filled porosity falls, late heat is shaped by that water law as well
// as by the through-product barrier, and the two trade off on fitting-size
// boxes: measured at the command's defaults, the through-product multiplier
// came back 0.904, 1.075 and 1.109 × its truth on three targets.
const fitThroughTol = 0.15

func TestParseFixes(t *testing.T) {
	fixed, sets, err := parseFixes([]string{"through_product_scale=1.5", "kinetics.nucleation_scale = 0.7"})
	if err != nil || fixed != [3]bool{false, true, true} || len(sets) != 2 || sets[0] != "kinetics.through_product_scale=1.5" || sets[1] != "kinetics.nucleation_scale=0.7" {
		t.Errorf("fixed %v, sets %q, %v", fixed, sets, err)
	}
	for _, c := range []struct{ arg, want string }{
		{"silicate_saturation=1", "KEY one of dissolution_scale"},
		{"dissolution_scale", "want KEY=VALUE"},
		{"dissolution_scale=0", "must be a number > 0 and ≤ 1000"},
		{"dissolution_scale=x", "must be a number"},
	} {
		if _, _, err := parseFixes([]string{c.arg}); err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("--fix %s: %v, want %q", c.arg, err, c.want)
		}
	}
	if _, _, err := parseFixes([]string{"nucleation_scale=1", "nucleation_scale=2"}); err == nil || !strings.Contains(err.Error(), "twice") {
		t.Errorf("fixed twice: %v", err)
	}
}

// gelspace fit end to end on the invented lab curves of testdata/fit: it
// writes fit.toml, a [kinetics] fragment that a config accepts, fit.json
// and fit.png. (Few evaluations on a small box: this checks the command,
// not the quality of the fit.)
func TestFitCommand(t *testing.T) {
	for _, name := range []string{"rw-g-heat-20c.csv", "rw-g-flow-20c.csv", "rw-g-alpha-20c.csv"} {
		out := filepath.Join(t.TempDir(), "fit")
		msg := mainOK(t, "fit", filepath.Join("..", "..", "testdata", "fit", name), "--size", "24", "--seeds", "1", "--max-evals", "12", "--out", out)
		if !strings.Contains(msg, "dissolution_scale") {
			t.Errorf("%s: %s", name, msg)
		}
		frag := readFile(t, filepath.Join(out, "fit.toml"))
		cfgPath := filepath.Join(t.TempDir(), "c.toml")
		os.WriteFile(cfgPath, []byte(goodConfig+frag), 0o644)
		if _, err := configs.Load(cfgPath, nil); err != nil {
			t.Errorf("%s: fit.toml does not make a valid config: %v\n%s", name, err, frag)
		}
		for _, f := range []string{"fit.json", "fit.png"} {
			if st, err := os.Stat(filepath.Join(out, f)); err != nil || st.Size() == 0 {
				t.Errorf("%s: %s missing", name, f)
			}
		}
	}
	// --fix holds a multiplier exactly and says so.
	out := filepath.Join(t.TempDir(), "fit")
	mainOK(t, "fit", filepath.Join("..", "..", "testdata", "fit", "rw-g-heat-20c.csv"), "--size", "24", "--seeds", "1", "--max-evals", "12",
		"--fix", "through_product_scale=1.2", "--fix", "nucleation_scale=0.8", "--out", out, "-q")
	var r fit.Result
	if err := json.Unmarshal([]byte(readFile(t, filepath.Join(out, "fit.json"))), &r); err != nil {
		t.Fatal(err)
	}
	if r.Fitted["through_product_scale"] != 1.2 || r.Fitted["nucleation_scale"] != 0.8 || len(r.Fixed) != 2 || r.Start["dissolution_scale"] != 1 {
		t.Errorf("--fix: fitted %v, fixed %v, start %v", r.Fitted, r.Fixed, r.Start)
	}
	if frag := readFile(t, filepath.Join(out, "fit.toml")); !strings.Contains(frag, "nucleation_scale = 0.8  # held (--fix)") {
		t.Errorf("fit.toml does not mark the held multiplier:\n%s", frag)
	}
	var o, e bytes.Buffer
	if code := Main([]string{"fit", "x.csv", "--fix", "alpha=1"}, &o, &e); code != 2 || !strings.Contains(e.String(), "--fix") {
		t.Errorf("bad --fix: exit %d, %s", code, e.String())
	}
}

// fitLongTargets are the synthetic truths of the long test; through says
// whether the through-product multiplier is checked.
var fitLongTargets = []struct {
	truth   fit.Multipliers
	through bool
}{
	{fit.Multipliers{1, 1, 1}, true},
	{fit.Multipliers{0.8, 1.2, 1}, true},
	{fit.Multipliers{1.2, 0.8, 1.25}, true},
	// Faster nucleation with a slower through-product stage: the two
	// nearly cancel (the curve is within 0.1 of the default's misfit,
	// about the change of random path), and the fit stays near the start.
	{fit.Multipliers{1, 1.5, 0.8}, false},
}

// With the command's defaults (40³ voxels, seeds 7–9, 120 evaluations)
// gelspace fit of a 28-day heat curve that the model makes on those same
// boxes recovers the dissolution multiplier within 10 % for every target
// of fitLongTargets and the through-product multiplier for those marked.
// The nucleation multiplier is logged, not checked: it moves this
// engine's curve by little more than the change of random path does (see
// TestFitRecoversSynthetic).
func TestFitCommandRecoversLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("GELSPACE_LONG not set: four fits with the default settings take several minutes")
	}
	cfg, err := configs.Load("", []string{"box.voxels=40", "curing.until_h=672", "output.times_h=[]"})
	if err != nil {
		t.Fatal(err)
	}
	times := fitSyntheticTimes(672)
	m, err := fit.NewModel(cfg, 3, times, false)
	if err != nil {
		t.Fatal(err)
	}
	for _, target := range fitLongTargets {
		truth := target.truth
		heat, err := m.Curve(truth)
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		b.WriteString("time_h,heat_j_per_g\n")
		for i, h := range times {
			fmt.Fprintf(&b, "%g,%.6f\n", h, heat[i])
		}
		curve := filepath.Join(t.TempDir(), "heat.csv")
		os.WriteFile(curve, b.Bytes(), 0o644)
		out := filepath.Join(t.TempDir(), "fit")
		args := []string{"fit", curve, "--out", out, "-q"}
		if truth == (fit.Multipliers{1, 1, 1}) { // start away from the truth
			args = append(args, "--set", "kinetics.dissolution_scale=1.3", "--set", "kinetics.nucleation_scale=0.7", "--set", "kinetics.through_product_scale=1.3")
		}
		mainOK(t, args...)
		var r fit.Result
		if err := json.Unmarshal([]byte(readFile(t, filepath.Join(out, "fit.json"))), &r); err != nil {
			t.Fatal(err)
		}
		var ratio [3]float64
		for i, k := range fit.MultiplierKeys {
			ratio[i] = r.Fitted[k] / truth[i]
		}
		t.Logf("truth %v: fitted/truth %.3f, misfit %.4g from %.4g (%v), determined %v, %.0f s", truth, ratio, r.Misfit, r.MisfitStart, r.MisfitParts, r.Determined, r.WallS)
		for _, i := range []int{0, 2} {
			tol := fitRecoveryTol
			if i == 2 {
				tol = fitThroughTol
			}
			if (i == 0 || target.through) && math.Abs(ratio[i]-1) > tol {
				t.Errorf("truth %v: %s = %.3f, want %.3f within %.0f %%", truth, fit.MultiplierKeys[i], r.Fitted[fit.MultiplierKeys[i]], truth[i], 100*tol)
			}
		}
		// The last target starts within the noise of its truth (misfit
		// 0.10): there the fit can only improve on the start, not halve it.
		if !(r.Misfit < 0.5*r.MisfitStart) && (target.through || r.Misfit > r.MisfitStart) {
			t.Errorf("truth %v: misfit %.4g from %.4g, want below half the start", truth, r.Misfit, r.MisfitStart)
		}
	}
}
