package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"gelspace/cmd/gelspace/sweep"
)

// sweepBase is a tiny run config for sweep tests: 24³ voxels to 24 h,
// shared with the other sweep tests in testdata.
var sweepBase = func() string {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "sweep-base-24.toml"))
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

func mainOK(t testing.TB, args ...string) string {
	t.Helper()
	var out, errb bytes.Buffer
	if code := Main(args, &out, &errb); code != 0 {
		t.Fatalf("gelspace %s: exit %d: %s", strings.Join(args, " "), code, errb.String())
	}
	return out.String()
}

func readFile(t testing.TB, p string) string {
	t.Helper()
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// A swept value that the config refuses is reported at the axis's line in
// the sweep file, and a key unknown to the config too; exit status 2,
// nothing run.
func TestSweepBadAxisValue(t *testing.T) {
	for _, c := range []struct{ axis, want string }{
		{`"mix.w_c" = [0.4, 5.0]`, `sweep.toml:4: mix.w_c: 5: must be between 0.2 and 1.5 (point 1: mix.w_c = 5.0)`},
		{`"mix.wc" = [0.4]`, `sweep.toml:4: mix.wc: unknown key`},
	} {
		sw := writeSweep(t, "base = \"base.toml\"\nreplicates = 2\n[axes]\n"+c.axis+"\n")
		out := filepath.Join(t.TempDir(), "out")
		var o, e bytes.Buffer
		code := Main([]string{"sweep", sw, "--out", out, "-q"}, &o, &e)
		if code != 2 || !strings.Contains(e.String(), c.want) || strings.Count(e.String(), "\n") != 1 {
			t.Errorf("%s: exit %d, message %q; want 2 and %q", c.axis, code, e.String(), c.want)
		}
		if _, err := os.Stat(out); err == nil {
			t.Errorf("%s: the sweep folder was created for a refused sweep", c.axis)
		}
	}
}

// Sweep results do not depend on --jobs: the summaries are byte for byte
// the same with one and two workers.
func TestSweepJobsIdentical(t *testing.T) {
	sw := writeSweep(t, tinySweep)
	d1, d2 := filepath.Join(t.TempDir(), "j1"), filepath.Join(t.TempDir(), "j2")
	mainOK(t, "sweep", sw, "--jobs", "1", "--out", d1, "-q")
	mainOK(t, "sweep", sw, "--jobs", "2", "--out", d2, "-q")
	for _, f := range []string{"summary.csv", "summary_stats.csv"} {
		a, b := readFile(t, filepath.Join(d1, f)), readFile(t, filepath.Join(d2, f))
		if a != b {
			t.Errorf("%s differs between --jobs 1 and --jobs 2:\n%s\n---\n%s", f, a, b)
		}
	}
	// the PSD varies: the outputs are drawn against its d50 and surface too
	for _, f := range []string{"alpha_1d_vs_d50.png", "set_time_h_vs_surface.svg", "main_peak_time_h.png"} {
		if _, err := os.Stat(filepath.Join(d1, "plots", f)); err != nil {
			t.Errorf("plots/%s: %v", f, err)
		}
	}
	sum := readFile(t, filepath.Join(d1, "summary.csv"))
	lines := strings.Split(strings.TrimSpace(sum), "\n")
	if len(lines) != 9 || !strings.HasPrefix(lines[0], "point,replicate,folder,mix.w_c,psd.rosin_rammler.x_um,psd.rosin_rammler.n,seed,status,set_time_h,set_alpha,depercolation_time_h,main_peak_time_h,main_peak_mw_per_g,alpha_1d") || !strings.HasSuffix(lines[0], ",psd_d50_um,psd_surface_m2_per_kg,carried_fraction") {
		t.Fatalf("summary.csv:\n%s", sum)
	}
	for _, l := range lines[1:] {
		if !strings.Contains(l, ",ok,") {
			t.Errorf("row not ok: %s", l)
		}
	}
	stats := readFile(t, filepath.Join(d1, "summary_stats.csv"))
	if n := strings.Count(strings.TrimSpace(stats), "\n"); n != 4 {
		t.Errorf("summary_stats.csv has %d point rows, want 4:\n%s", n, stats)
	}
	for _, f := range []string{"plots/alpha_1d.png", "plots/set_time_h.png", "slurm.sh", "commands.txt", "sweep.json"} {
		if _, err := os.Stat(filepath.Join(d1, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	// Running again finds every point complete and runs nothing.
	out := mainOK(t, "sweep", sw, "--jobs", "2", "--out", d1)
	if !strings.Contains(out, "8 already complete, 0 run") {
		t.Errorf("second sweep: %s", out)
	}
	// Editing a point's config makes exactly that point run again (the
	// sweep rewrites config.toml from the sweep file and drops its marker).
	cp := filepath.Join(d1, "points", "p0002_r1", "config.toml")
	os.WriteFile(cp, []byte(readFile(t, cp)+"\n"), 0o644)
	out = mainOK(t, "sweep", sw, "--jobs", "2", "--out", d1)
	if !strings.Contains(out, "7 already complete, 1 run") {
		t.Errorf("after editing one config: %s", out)
	}
	if readFile(t, filepath.Join(d1, "summary.csv")) != sum {
		t.Errorf("summary changed after rerunning one point")
	}
}

// A point that fails records its error; the other points still run and the
// sweep exits 1.
func TestSweepFailedPoint(t *testing.T) {
	// w/c 0.2 with two water voxels between grains cannot be packed (a
	// run-time failure of that point only).
	sw := writeSweep(t, "base = \"base.toml\"\n[set]\n\"mix.w_c\" = 0.2\n[axes]\n\"pack.grain_spacing_um\" = [0, 2]\n")
	out := filepath.Join(t.TempDir(), "out")
	var o, e bytes.Buffer
	code := Main([]string{"sweep", sw, "--out", out, "-q"}, &o, &e)
	if code != 1 || !strings.Contains(e.String(), "1 of 2 runs failed") || !strings.Contains(e.String(), "p0001_r0") {
		t.Fatalf("exit %d: %s", code, e.String())
	}
	if msg := readFile(t, filepath.Join(out, "points", "p0001_r0", sweep.PointErrorFile)); !strings.Contains(msg, "raise mix.w_c") {
		t.Errorf("error.txt: %q", msg)
	}
	sum := readFile(t, filepath.Join(out, "summary.csv"))
	if !strings.Contains(sum, "p0000_r0,0,3,ok,") || !strings.Contains(sum, "p0001_r0,2,3,failed,") {
		t.Errorf("summary.csv:\n%s", sum)
	}
}

// plan writes every point's config and the scheduler files; running the
// listed commands one by one, then collect, gives the summary that sweep
// gives.
func TestSweepPlanCollect(t *testing.T) {
	sw := writeSweep(t, tinySweep)
	ref := filepath.Join(t.TempDir(), "ref")
	mainOK(t, "sweep", sw, "--out", ref, "-q")
	dir := filepath.Join(t.TempDir(), "plan")
	mainOK(t, "sweep", "plan", sw, "--out", dir, "-q")
	script := readFile(t, filepath.Join(dir, sweep.SlurmScriptFile))
	for _, want := range []string{"#!/bin/bash", "#SBATCH --array=0-7", "SLURM_ARRAY_TASK_ID", "run \"$point/config.toml\" --out \"$point\" --no-render"} {
		if !strings.Contains(script, want) {
			t.Errorf("slurm.sh lacks %q:\n%s", want, script)
		}
	}
	if st, _ := os.Stat(filepath.Join(dir, sweep.SlurmScriptFile)); st.Mode()&0o100 == 0 {
		t.Errorf("slurm.sh is not executable")
	}
	// collect before any point ran: exit 1, every row missing.
	var o, e bytes.Buffer
	if code := Main([]string{"sweep", "collect", dir, "-q"}, &o, &e); code != 1 || !strings.Contains(e.String(), "8 not finished") {
		t.Errorf("collect of an unrun plan: exit %d, %s", code, e.String())
	}
	cmds := strings.Split(strings.TrimSpace(readFile(t, filepath.Join(dir, sweep.CommandsFile))), "\n")
	if len(cmds) != 8 {
		t.Fatalf("commands.txt has %d lines", len(cmds))
	}
	t.Chdir(dir)
	for _, c := range cmds {
		f := strings.Fields(c)
		if f[0] != "gelspace" {
			t.Fatalf("command %q", c)
		}
		mainOK(t, f[1:]...)
	}
	mainOK(t, "sweep", "collect", dir, "-q")
	for _, f := range []string{"summary.csv", "summary_stats.csv"} {
		if a, b := readFile(t, filepath.Join(ref, f)), readFile(t, filepath.Join(dir, f)); a != b {
			t.Errorf("%s: plan + collect differs from sweep:\n%s\n---\n%s", f, a, b)
		}
	}
	// collect wrote the markers, so a sweep over the folder runs nothing.
	if out := mainOK(t, "sweep", sw, "--out", dir); !strings.Contains(out, "8 already complete, 0 run") {
		t.Errorf("sweep after collect: %s", out)
	}
}

// SIGKILL during a sweep, then resume: every point completes exactly once
// and the summary matches an uninterrupted sweep.
func TestSweepKillResume(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the binary")
	}
	bin := filepath.Join(t.TempDir(), "gelspace")
	build := exec.Command("go", "build", "-o", bin, ".")
	if out, err := build.CombinedOutput(); err != nil {
		t.Fatalf("go build: %v\n%s", err, out)
	}
	sw := writeSweep(t, tinySweep)
	ref := filepath.Join(t.TempDir(), "ref")
	mainOK(t, "sweep", sw, "--out", ref, "--jobs", "2", "-q")

	dir := filepath.Join(t.TempDir(), "killed")
	cmd := exec.Command(bin, "sweep", sw, "--out", dir, "--jobs", "2", "-q")
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(60 * time.Second)
	for {
		m, _ := filepath.Glob(filepath.Join(dir, "points", "*", sweep.MarkerFile))
		if len(m) > 0 {
			break
		}
		if time.Now().After(deadline) {
			cmd.Process.Kill()
			t.Fatal("no point completed within 60 s")
		}
		time.Sleep(2 * time.Millisecond)
	}
	cmd.Process.Signal(syscall.SIGKILL)
	cmd.Wait()
	before := map[string]string{}
	m, _ := filepath.Glob(filepath.Join(dir, "points", "*", sweep.MarkerFile))
	for _, p := range m {
		before[p] = readFile(t, p)
	}
	if len(before) == 8 {
		t.Log("every point had finished before the kill; the resume then only checks skipping")
	}
	out, err := exec.Command(bin, "sweep", sw, "--out", dir, "--jobs", "2").CombinedOutput()
	if err != nil {
		t.Fatalf("resume: %v\n%s", err, out)
	}
	if !strings.Contains(string(out), fmt.Sprintf("%d already complete, %d run", len(before), 8-len(before))) {
		t.Errorf("resume: %s (had %d complete)", out, len(before))
	}
	// Markers written before the kill are untouched; every point has one.
	for p, b := range before {
		if readFile(t, p) != b {
			t.Errorf("%s was rewritten on resume: the point ran twice", p)
		}
	}
	m, _ = filepath.Glob(filepath.Join(dir, "points", "*", sweep.MarkerFile))
	if len(m) != 8 {
		t.Errorf("%d markers after resume, want 8", len(m))
	}
	// The log: each point finished ("done") at most once over both
	// processes, and every point not complete at the kill exactly once by
	// the resume.
	log := readFile(t, filepath.Join(dir, sweep.LogFile))
	pids := map[string]bool{}
	for _, p := range m {
		var mk sweep.Marker
		json.Unmarshal([]byte(readFile(t, p)), &mk)
		pids[fmt.Sprint(mk.PID)] = true
		name := filepath.Base(filepath.Dir(p))
		if n := strings.Count(log, " done "+name+"\n"); n > 1 || (n == 0 && before[p] == "") {
			t.Errorf("%s finished %d times in the log:\n%s", name, n, log)
		}
	}
	for _, f := range []string{"summary.csv", "summary_stats.csv"} {
		if a, b := readFile(t, filepath.Join(ref, f)), readFile(t, filepath.Join(dir, f)); a != b {
			t.Errorf("%s after kill and resume differs from an uninterrupted sweep:\n%s\n---\n%s", f, a, b)
		}
	}
	// The resume cleaned the temporary files of the killed points.
	if tmp, _ := filepath.Glob(filepath.Join(dir, "points", "*", ".*.tmp-*")); len(tmp) > 0 {
		t.Errorf("temporary files left after resume: %v", tmp)
	}
}

// Replicate statistics: mean, sample standard deviation and the Student t
// interval; missing values are left out, not counted as zeros.
// BenchmarkSweepScaling runs one point with --jobs 1 and two points with
// --jobs 2 and reports both times and their ratio (Speed target: ≤ 1.15 on
// two free cores).
func BenchmarkSweepScaling(b *testing.B) {
	base := strings.Replace(strings.Replace(sweepBase, "voxels = 24", "voxels = 40", 1), "until_h = 24.0", "until_h = 72.0", 1)
	base = strings.Replace(base, "times_h = [4, 8, 24]", "times_h = [4, 8, 24, 72]", 1)
	dir := b.TempDir()
	os.WriteFile(filepath.Join(dir, "base.toml"), []byte(base), 0o644)
	one := filepath.Join(dir, "one.toml")
	two := filepath.Join(dir, "two.toml")
	// Two replicates of the same mix: two points of equal cost.
	os.WriteFile(one, []byte("base = \"base.toml\"\nreplicates = 1\n[axes]\n\"mix.w_c\" = [0.45]\n"), 0o644)
	os.WriteFile(two, []byte("base = \"base.toml\"\nreplicates = 2\n[axes]\n\"mix.w_c\" = [0.45]\n"), 0o644)
	var t1, t2 time.Duration
	var cpu2 float64
	for i := 0; i < b.N; i++ {
		s := time.Now()
		mainOK(b, "sweep", one, "--jobs", "1", "--out", filepath.Join(dir, fmt.Sprintf("o1-%d", i)), "-q")
		t1 += time.Since(s)
		c0 := cpuSeconds()
		s = time.Now()
		mainOK(b, "sweep", two, "--jobs", "2", "--out", filepath.Join(dir, fmt.Sprintf("o2-%d", i)), "-q")
		t2 += time.Since(s)
		cpu2 += cpuSeconds() - c0
	}
	// cpu/wall of the two-job sweep: near 2 when both points ran side by
	// side; below when other work held a core.
	b.ReportMetric(cpu2/t2.Seconds(), "cpu/wall-2jobs")
	b.ReportMetric(t1.Seconds()/float64(b.N), "s/1pt-1job")
	b.ReportMetric(t2.Seconds()/float64(b.N), "s/2pt-2jobs")
	b.ReportMetric(t2.Seconds()/t1.Seconds(), "ratio")
}

// cpuSeconds is the CPU time (user + system) of this process so far.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}
