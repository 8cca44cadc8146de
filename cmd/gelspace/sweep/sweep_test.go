package sweep

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gelspace/configs"
)

// sweepBase is a tiny run config for sweep tests: 24³ voxels to 24 h,
// shared with the other sweep tests in testdata.
var sweepBase = func() string {
	b, err := os.ReadFile(filepath.Join("..", "..", "..", "testdata", "sweep-base-24.toml"))
	if err != nil {
		panic(err)
	}
	return string(b)
}()

// tinySweep is 2 w/c × 2 grinds (zipped with n) × 2 replicates = 8 runs.
const tinySweep = `base = "base.toml"
replicates = 2
[axes]
"mix.w_c" = [0.40, 0.50]
[zip]
"psd.rosin_rammler.x_um" = [5.0, 7.0]
"psd.rosin_rammler.n" = [1.0, 1.2]
`

// writeSweep writes base.toml and sweep.toml into a new folder and
// returns the sweep file's path.
func writeSweep(t testing.TB, sweep string) string {
	t.Helper()
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "base.toml"), []byte(sweepBase), 0o644); err != nil {
		t.Fatal(err)
	}
	p := filepath.Join(dir, "sweep.toml")
	if err := os.WriteFile(p, []byte(sweep), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

func TestParseSweepRanges(t *testing.T) {
	s, err := Parse("s.toml", []byte(`replicates = 3
[axes]
"mix.w_c" = { from = 0.35, to = 0.55, step = 0.05 }
"box.voxels" = { from = 20, to = 30, step = 5 }
"curing.mode" = ["saturated", "sealed"]
`))
	if err != nil {
		t.Fatal(err)
	}
	got := fmt.Sprint(s.Axes[0].Values)
	if got != "[0.35 0.4 0.45 0.5 0.55]" {
		t.Errorf("w/c range = %s, want [0.35 0.4 0.45 0.5 0.55] exactly", got)
	}
	if got := fmt.Sprint(s.Axes[1].Values); got != "[20 25 30]" {
		t.Errorf("integer range = %s", got)
	}
	if _, ok := s.Axes[1].Values[0].(int64); !ok {
		t.Errorf("integer range gave %T, want int64", s.Axes[1].Values[0])
	}
	if s.NumPoints() != 5*3*2 || s.Replicates != 3 {
		t.Errorf("points %d, replicates %d", s.NumPoints(), s.Replicates)
	}
	// Row-major, first axis slowest: point 7 = w/c index 1, voxels 0, mode 1.
	if got := fmt.Sprint(s.valueIndices(7)); got != "[1 0 1]" {
		t.Errorf("valueIndices(7) = %s, want [1 0 1]", got)
	}
	// A range whose end falls between steps stops before it.
	v, err := floatRange(0.1, 0.35, 0.1)
	if err != nil || fmt.Sprint(v) != "[0.1 0.2 0.3]" {
		t.Errorf("floatRange(0.1, 0.35, 0.1) = %v, %v", v, err)
	}
}

func TestParseSweepErrors(t *testing.T) {
	for _, c := range []struct{ name, text, want string }{
		{"unknown top key", "replicate = 3\n[axes]\n\"mix.w_c\" = [0.4]\n", "s.toml:1: replicate: unknown key"},
		{"unknown axes subkey", "[axes]\n\"mix.w_c\" = { from = 0.3, to = 0.5, stride = 0.1 }\n", "s.toml:2: axes.mix.w_c: range key \"stride\""},
		{"zip lengths", "[zip]\n\"mix.w_c\" = [0.4, 0.5]\n\"box.voxels\" = [20, 24, 30]\n", "s.toml:3: zip.box.voxels: has 3 values but mix.w_c (line 2) has 2"},
		{"scalar axis", "[axes]\n\"mix.w_c\" = 0.4\n", "must be a list"},
		{"negative step", "[axes]\n\"mix.w_c\" = { from = 0.5, to = 0.3, step = 0.1 }\n", "step must be > 0 and to ≥ from"},
		{"bad replicates", "replicates = 0\n[axes]\n\"mix.w_c\" = [0.4]\n", "s.toml:1: replicates: 0: must be a whole number between 1 and 1000"},
		{"twice", "[axes]\n\"mix.w_c\" = [0.4]\n[zip]\n\"mix.w_c\" = [0.5]\n", "already swept"},
		{"nothing", "base = \"b.toml\"\n", "nothing to sweep"},
		{"malformed", "[axes\n", "s.toml:2: malformed TOML"},
	} {
		_, err := Parse("s.toml", []byte(c.text))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want it to contain %q", c.name, err, c.want)
		}
	}
}

func TestSweepPointConfigs(t *testing.T) {
	sw := writeSweep(t, tinySweep)
	spec, err := Load(sw)
	if err != nil {
		t.Fatal(err)
	}
	pts, err := spec.Points(nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) != 8 {
		t.Fatalf("%d points, want 2 × 2 × 2 replicates = 8", len(pts))
	}
	want := []string{"p0000_r0", "p0000_r1", "p0001_r0", "p0001_r1", "p0002_r0", "p0002_r1", "p0003_r0", "p0003_r1"}
	for i, p := range pts {
		if p.Name != want[i] || p.Seed != 3+int64(p.Replicate) {
			t.Errorf("point %d: %s seed %d, want %s seed %d", i, p.Name, p.Seed, want[i], 3+p.Replicate)
		}
	}
	// Point 3 is w/c 0.5 with the second zip pair.
	cfgPath := filepath.Join(t.TempDir(), "config.toml")
	os.WriteFile(cfgPath, pts[7].Config, 0o644)
	cfg, err := configs.Load(cfgPath, nil)
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Mix.WC != 0.5 || cfg.PSD.RosinRammler.XUM != 7 || cfg.PSD.RosinRammler.N != 1.2 || cfg.Seed != 4 || cfg.Box.Voxels != 24 {
		t.Errorf("point p0003_r1 config: w/c %g, x′ %g, n %g, seed %d, voxels %d", cfg.Mix.WC, cfg.PSD.RosinRammler.XUM, cfg.PSD.RosinRammler.N, cfg.Seed, cfg.Box.Voxels)
	}
	// Command-line overrides reach every point; [set] keys too.
	spec2, _ := Parse(sw, []byte(tinySweep+"[set]\n\"curing.temperature_c\" = 30.0\n"))
	pts2, err := spec2.Points([]string{"box.voxels=20"})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(pts2[0].Config), "voxels = 20") || !strings.Contains(string(pts2[0].Config), "temperature_c = 30.0") {
		t.Errorf("overrides missing from the point config:\n%s", pts2[0].Config)
	}
}

func TestStatsOf(t *testing.T) {
	// t(0.975, ν = 2) = 4.303 and t(0.975, ν = 4) = 2.776: standard
	// Student t tables (common practice).
	s := statsOf([]float64{1, 2, 3})
	if s.N != 3 || s.Mean != 2 || math.Abs(s.SD-1) > 1e-12 || math.Abs(s.TQ95-4.303) > 5e-4 {
		t.Errorf("statsOf(1,2,3) = %+v", s)
	}
	if want := 4.3027 / math.Sqrt(3); math.Abs(s.CI95-want) > 1e-3 {
		t.Errorf("ci95 = %g, want %g", s.CI95, want)
	}
	s = statsOf([]float64{2, 4, 4, 4, 6})
	if math.Abs(s.TQ95-2.776) > 5e-4 {
		t.Errorf("t(0.975, 4) = %g, want 2.776", s.TQ95)
	}
	nan := math.NaN()
	s = statsOf([]float64{10, nan, 14})
	if s.N != 2 || s.Mean != 12 {
		t.Errorf("with a missing replicate: %+v, want n 2, mean 12", s)
	}
	s = statsOf([]float64{nan, 5, nan})
	if s.N != 1 || s.Mean != 5 || !math.IsNaN(s.SD) || !math.IsNaN(s.CI95) {
		t.Errorf("one value: %+v", s)
	}
	s = statsOf([]float64{nan})
	if s.N != 0 || !math.IsNaN(s.Mean) {
		t.Errorf("no value: %+v", s)
	}
	// In summary_stats.csv a point where one replicate of two depercolated
	// says n = 1 and gives that value as the mean.
	pl := &Plan{Replicates: 2, Axes: []PlanAxis{{Key: "mix.w_c", Values: []string{"0.4"}}}}
	nOut := len(Outputs())
	row := func(rep int, dep float64) Row {
		v := make([]float64, nOut)
		for i := range v {
			v[i] = nan
		}
		v[2] = dep
		return Row{P: PlanPoint{Name: fmt.Sprintf("p0000_r%d", rep), Replicate: rep, Values: []int{0}}, Status: StatusOK, Vals: v}
	}
	var b bytes.Buffer
	if err := writeStatsCSV(&b, pl, []Row{row(0, 100), row(1, nan)}); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(b.String(), "0,0.4,2,2,0,,,,0,,,,1,100,,,") {
		t.Errorf("summary_stats.csv:\n%s", b.String())
	}
}

// A sweep varies an SCM's content by its index (scm.1.mass_percent), and
// the silica-fume study's points resolve to the blends they name, its 0 %
// point included; the plain-cement reference of each point is found.
func TestSweepOverSCMContent(t *testing.T) {
	spec, err := Load(filepath.Join("..", "..", "..", "configs", "sweeps", "silica-fume.toml"))
	if err != nil {
		t.Fatal(err)
	}
	pts, err := spec.Points(nil)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{0, 0, 5, 5, 10, 10}
	if len(pts) != len(want) {
		t.Fatalf("%d points, want %d", len(pts), len(want))
	}
	dir := t.TempDir()
	for i, p := range pts {
		cfgPath := filepath.Join(dir, p.Name+".toml")
		if err := os.WriteFile(cfgPath, p.Config, 0o644); err != nil {
			t.Fatal(err)
		}
		cfg, err := configs.Load(cfgPath, nil)
		if err != nil {
			t.Fatalf("%s: %v", p.Name, err)
		}
		if len(cfg.SCM) != 2 || cfg.SCM[1].Kind != "silica_fume" || cfg.SCM[1].MassPercent != want[i] || cfg.SCM[0].MassPercent != 0 || cfg.Mix.WB != 0.45 {
			t.Errorf("%s: SCMs %+v, w/b %g; want silica fume %g %% at w/b 0.45", p.Name, cfg.SCM, cfg.Mix.WB, want[i])
		}
	}
	pl := NewPlan(spec, pts, false)
	var first []Row
	for _, p := range pl.Points {
		if p.Replicate == 0 {
			first = append(first, Row{P: p})
		}
	}
	if ref := plainReference(pl, first); len(ref) != 3 || ref[0] != 0 || ref[1] != 0 || ref[2] != 0 {
		t.Errorf("plain-cement references %v, want [0 0 0]", ref)
	}
}
