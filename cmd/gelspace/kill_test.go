package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io/fs"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gelspace/cmd/gelspace/run"
)

// asMain makes the test binary act as the gelspace command when
// GELSPACE_TEST_AS_MAIN=1, so that tests can start it as a process and
// kill it (the kill/resume tests below).
const asMain = "GELSPACE_TEST_AS_MAIN"

func TestMain(m *testing.M) {
	if os.Getenv(asMain) == "1" {
		os.Exit(Main(os.Args[1:], os.Stdout, os.Stderr))
	}
	os.Exit(m.Run())
}

// gelspaceCmd is the test binary started as gelspace with args.
func gelspaceCmd(args ...string) *exec.Cmd {
	c := exec.Command(os.Args[0], args...)
	c.Env = append(os.Environ(), asMain+"=1")
	return c
}

// killOutputs are the files compared between a killed-and-resumed run and
// one that never stopped (summary.json without its wall-clock fields).
var killOutputs = []string{"series.csv", "samples.csv", "summary.json", "final.vti", "final.npy", "phases.csv"}

// killResume runs the config text cfg once without stopping, then again
// killed by SIGKILL at kills random moments (seeded) and resumed each
// time, and asserts that every output is byte for byte the same, that the
// folder holds no temporary file or checkpoint at the end, and that
// run.json never says complete while an output is missing.
func killResume(t *testing.T, cfg string, kills int, seed uint64, extra ...string) {
	dir := t.TempDir()
	cfgPath := filepath.Join(dir, "cfg.toml")
	if err := os.WriteFile(cfgPath, []byte(cfg), 0o644); err != nil {
		t.Fatal(err)
	}
	ref, got := filepath.Join(dir, "ref"), filepath.Join(dir, "killed")
	start := time.Now()
	if out, err := gelspaceCmd(append([]string{"run", cfgPath, "--out", ref, "-q"}, extra...)...).CombinedOutput(); err != nil {
		t.Fatalf("uninterrupted run: %v\n%s", err, out)
	}
	full := time.Since(start)
	r := rand.New(rand.NewPCG(seed, 7))
	started, killed, finished := false, 0, false
	for attempt := 0; attempt < kills+20 && !finished; attempt++ {
		args := []string{"run", "--resume", got, "-q"}
		if !started {
			args = append([]string{"run", cfgPath, "--out", got, "-q", "--checkpoint-every", "2h", "--force"}, extra...)
		}
		c := gelspaceCmd(args...)
		var stderr bytes.Buffer
		c.Stderr = &stderr
		if err := c.Start(); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- c.Wait() }()
		var err error
		if killed < kills {
			// A moment within the first 60 % of the time an uninterrupted
			// run takes (a resume has less left to do, so later moments
			// would often come after it ended).
			wait := time.Duration(r.Float64() * 0.6 * float64(full))
			select {
			case err = <-done:
			case <-time.After(wait):
				c.Process.Kill()
				err = <-done
				killed++
				t.Logf("kill %d after %v (%v for the whole run)", killed, wait.Round(time.Millisecond), full.Round(time.Millisecond))
			}
		} else {
			err = <-done
		}
		var ee *exec.ExitError
		switch {
		case err == nil:
			finished = true
		case errors.As(err, &ee) && ee.ExitCode() == -1:
			// killed: fine
		case started && strings.Contains(stderr.String(), "the run is complete"):
			// killed after run.json was marked complete, before the
			// checkpoint was removed: the resume cleans up and says so
			finished = true
		default:
			t.Fatalf("%v: %v\n%s", args, err, stderr.String())
		}
		// Before its manifest is written a run folder cannot be resumed:
		// it is started again.
		if _, err := os.Stat(filepath.Join(got, run.ManifestFile)); err == nil {
			started = true
		}
		checkCompleteLast(t, got)
	}
	if !finished {
		t.Fatal("the run never finished")
	}
	if killed == 0 {
		t.Fatal("no kill landed before the run finished")
	}
	for _, f := range killOutputs {
		a, err1 := os.ReadFile(filepath.Join(ref, f))
		b, err2 := os.ReadFile(filepath.Join(got, f))
		if err1 != nil || err2 != nil {
			t.Fatalf("%s: %v %v", f, err1, err2)
		}
		if f == "summary.json" {
			a, b = dropWall(t, a), dropWall(t, b)
		}
		if !bytes.Equal(a, b) {
			t.Errorf("%s differs after %d kills and resumes (%d vs %d bytes)", f, killed, len(a), len(b))
		}
	}
	// The resumes keep the first start's --no-render (or its images).
	_, err := os.Stat(filepath.Join(got, "report.html"))
	if noRender := strings.Contains(strings.Join(extra, " "), "--no-render"); noRender != (err != nil) {
		t.Errorf("--no-render %v, but report.html: %v", noRender, err)
	}
	filepath.WalkDir(got, func(p string, d fs.DirEntry, err error) error {
		if err == nil && (strings.Contains(d.Name(), ".tmp-") || d.Name() == run.CheckpointFile) {
			t.Errorf("left behind: %s", p)
		}
		return nil
	})
}

// checkCompleteLast fails when run.json says complete, or the report
// (written after every other output) exists, while an output is missing.
func checkCompleteLast(t *testing.T, dir string) {
	_, noReport := os.Stat(filepath.Join(dir, "report.html"))
	if noReport == nil {
		for _, f := range killOutputs {
			if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
				t.Errorf("report.html is written but %s is missing", f)
			}
		}
	}
	data, err := os.ReadFile(filepath.Join(dir, run.ManifestFile))
	if err != nil {
		return
	}
	var m run.Manifest
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatalf("run.json unreadable after a kill: %v", err)
	}
	if !m.Complete {
		return
	}
	for _, f := range killOutputs {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("run.json says complete but %s is missing", f)
		}
	}
	if !m.NoRender && noReport != nil {
		t.Error("run.json says complete but report.html is missing")
	}
}

// dropWall removes summary.json's wall-clock fields.
func dropWall(t *testing.T, data []byte) []byte {
	var m map[string]any
	if err := json.Unmarshal(data, &m); err != nil {
		t.Fatal(err)
	}
	delete(m, "wall_s")
	delete(m, "events_per_s")
	out, _ := json.Marshal(m)
	return out
}

// killConfig is a config of an n³ box hydrated to untilH.
func killConfig(n int, untilH float64) string {
	return strings.NewReplacer("voxels = 24", fmt.Sprintf("voxels = %d", n), "until_h = 24.0", fmt.Sprintf("until_h = %g", untilH),
		"times_h = [4, 8, 24]", "times_h = [2, 4, 8, 12, 24, 48]").Replace(hostileBase)
}

// TestKillResume: a 24³ run to 48 h with images, killed three times at
// random moments and resumed, writes the same outputs as one that never
// stopped.
func TestKillResume(t *testing.T) {
	killResume(t, killConfig(24, 48), 3, 1)
}

// TestKillResumeLong: a 48³ run to 168 h killed at eight random moments
// (two seeds), with and without images. GELSPACE_LONG=1 only.
func TestKillResumeLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long: set GELSPACE_LONG=1")
	}
	for _, seed := range []uint64{2, 3} {
		t.Run(fmt.Sprint("seed", seed), func(t *testing.T) {
			killResume(t, strings.Replace(killConfig(48, 168), "times_h = [2, 4, 8, 12, 24, 48]", "times_h = [2, 4, 8, 12, 24, 48, 168]", 1), 8, seed)
		})
	}
	t.Run("no-render", func(t *testing.T) {
		killResume(t, killConfig(48, 168), 8, 4, "--no-render")
	})
}
