package main

// Running a sweep: the sweep folder's layout, the completion markers, the
// worker pool, and the plan for a cluster's scheduler.
//
// A sweep folder holds sweep.json (the plan: axes and points), points/
// with one folder per point and replicate (config.toml, the run's outputs,
// and done.json, the completion marker, written last), sweep.log (one line
// per point started, finished or failed), the summaries and plots/.
//
// done.json holds the SHA-256 of the point's config.toml (and the
// version): a point whose marker matches its present config is complete
// and is skipped on resume; any other point runs again from its start.
// Every output of a run is written through a temporary name and renamed,
// and the marker is renamed into place after all of them, so a sweep killed
// at any moment leaves complete points that are skipped and incomplete
// ones that rerun.

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"github.com/BurntSushi/toml"
	"github.com/schollz/progressbar/v3"
)

// Names in a sweep folder.
const (
	sweepPlanFile   = "sweep.json"
	sweepLogFile    = "sweep.log"
	sweepPointsDir  = "points"
	pointConfigFile = "config.toml"
	pointMarkerFile = "done.json"
	pointErrorFile  = "error.txt"
	slurmScriptFile = "slurm.sh"
	commandsFile    = "commands.txt"
	pointListFile   = "points.txt"
)

// sweepPlan is sweep.json: what collect needs to summarise the folder.
type sweepPlan struct {
	Version    string      `json:"version"`
	Sweep      string      `json:"sweep"`
	Name       string      `json:"name,omitempty"`
	Base       string      `json:"base"`
	Replicates int         `json:"replicates"`
	Images     bool        `json:"images"`
	Axes       []planAxis  `json:"axes"`
	Points     []planPoint `json:"points"`
}

// planAxis is one swept key and its values (as text and, where numeric,
// as numbers: NaN is written as null).
type planAxis struct {
	Key    string     `json:"key"`
	Zip    bool       `json:"zip,omitempty"`
	Values []string   `json:"values"`
	Num    []*float64 `json:"num"`
}

// planPoint is one run: its folder, axis combination, replicate, seed and
// the index of each axis's value.
type planPoint struct {
	Name      string `json:"name"`
	Point     int    `json:"point"`
	Replicate int    `json:"replicate"`
	Seed      int64  `json:"seed"`
	Values    []int  `json:"values"`
	Hash      string `json:"config_sha256"`
}

// marker is done.json.
type marker struct {
	ConfigSHA256 string  `json:"config_sha256"`
	Version      string  `json:"version"`
	PID          int     `json:"pid"`
	WallS        float64 `json:"wall_s"`
}

func makePlan(s *sweepSpec, pts []sweepPoint, images bool) *sweepPlan {
	pl := &sweepPlan{Version: version, Sweep: s.File, Name: s.Name, Base: s.Base, Replicates: s.Replicates, Images: images}
	if pl.Base == "" {
		pl.Base = DefaultConfigName
	}
	for _, a := range s.Axes {
		pa := planAxis{Key: a.Key, Zip: a.Table == "zip", Values: a.Text}
		for _, x := range a.Num {
			if x == x {
				pa.Num = append(pa.Num, ptr(x))
			} else {
				pa.Num = append(pa.Num, nil)
			}
		}
		pl.Axes = append(pl.Axes, pa)
	}
	for _, p := range pts {
		pl.Points = append(pl.Points, planPoint{Name: p.Name, Point: p.Point, Replicate: p.Replicate, Seed: p.Seed, Values: p.Values, Hash: configHash(p.Config)})
	}
	return pl
}

// writePlan lays out the sweep folder: sweep.json and every point's
// config.toml (rewritten only when it changed, so a complete point keeps
// its marker valid).
func writePlan(dir string, pl *sweepPlan, pts []sweepPoint) error {
	if err := os.MkdirAll(filepath.Join(dir, sweepPointsDir), 0o755); err != nil {
		return err
	}
	if old, err := readPlan(dir); err == nil && old.Sweep != "" {
		// A folder of another sweep is refused rather than mixed.
		if len(old.Axes) != len(pl.Axes) {
			return &usageError{fmt.Sprintf("sweep: %s holds a sweep with other axes (%s); use another --out", dir, axisKeys(old))}
		}
		for i := range old.Axes {
			if old.Axes[i].Key != pl.Axes[i].Key {
				return &usageError{fmt.Sprintf("sweep: %s holds a sweep with other axes (%s); use another --out", dir, axisKeys(old))}
			}
		}
	}
	for _, p := range pts {
		pd := filepath.Join(dir, sweepPointsDir, p.Name)
		if err := os.MkdirAll(pd, 0o755); err != nil {
			return err
		}
		path := filepath.Join(pd, pointConfigFile)
		if old, err := os.ReadFile(path); err == nil && bytes.Equal(old, p.Config) {
			continue
		}
		os.Remove(filepath.Join(pd, pointMarkerFile))
		cfgText := p.Config
		if err := WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(cfgText); return err }); err != nil {
			return err
		}
	}
	return WriteFileAtomic(filepath.Join(dir, sweepPlanFile), func(w io.Writer) error { return writeJSON(w, pl) })
}

func axisKeys(pl *sweepPlan) string {
	var k []string
	for _, a := range pl.Axes {
		k = append(k, a.Key)
	}
	return strings.Join(k, ", ")
}

func readPlan(dir string) (*sweepPlan, error) {
	path := filepath.Join(dir, sweepPlanFile)
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, &InputError{File: path, Msg: "cannot read the sweep plan: is this a gelspace sweep folder (made by gelspace sweep or sweep plan)?"}
	}
	var pl sweepPlan
	if err := json.Unmarshal(data, &pl); err != nil {
		return nil, &InputError{File: path, Msg: "malformed sweep plan: " + err.Error()}
	}
	return &pl, nil
}

// pointComplete reports whether the point folder's marker matches its
// config.toml.
func pointComplete(pd string) bool {
	cfg, err := os.ReadFile(filepath.Join(pd, pointConfigFile))
	if err != nil {
		return false
	}
	data, err := os.ReadFile(filepath.Join(pd, pointMarkerFile))
	if err != nil {
		return false
	}
	var m marker
	if json.Unmarshal(data, &m) != nil {
		return false
	}
	return m.ConfigSHA256 == configHash(cfg) && m.Version == version
}

// writeMarker writes done.json, the last file of a complete point.
func writeMarker(pd string, wallS float64) error {
	cfg, err := os.ReadFile(filepath.Join(pd, pointConfigFile))
	if err != nil {
		return err
	}
	m := marker{ConfigSHA256: configHash(cfg), Version: version, PID: os.Getpid(), WallS: wallS}
	return WriteFileAtomic(filepath.Join(pd, pointMarkerFile), func(w io.Writer) error { return writeJSON(w, m) })
}

// runPoint runs one point in its folder as gelspace run would run its
// config.toml, and writes the marker when every output is in place.
func runPoint(pd string, images bool) error {
	os.Remove(filepath.Join(pd, pointMarkerFile))
	os.Remove(filepath.Join(pd, pointErrorFile))
	// temporary files of an earlier, killed attempt
	if tmp, err := filepath.Glob(filepath.Join(pd, ".*.tmp-*")); err == nil {
		for _, p := range tmp {
			os.Remove(p)
		}
	}
	start := time.Now()
	cfg, err := LoadConfig(filepath.Join(pd, pointConfigFile), nil)
	if err != nil {
		return err
	}
	text, err := toml.Marshal(cfg.raw.Tree)
	if err != nil {
		return err
	}
	man := manifest{Version: version, ConfigName: cfg.Source, ConfigDir: cfg.Dir, ConfigText: string(text)}
	if _, err := executeRun(cfg, man, RunParams{Out: pd, Images: images, Stderr: io.Discard}); err != nil {
		return err
	}
	return writeMarker(pd, time.Since(start).Seconds())
}

// sweepLog appends lines to sweep.log; each line is one write, so lines of
// a killed sweep are whole or absent.
type sweepLog struct {
	mu sync.Mutex
	f  *os.File
}

func openSweepLog(dir string) (*sweepLog, error) {
	f, err := os.OpenFile(filepath.Join(dir, sweepLogFile), os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
	if err != nil {
		return nil, err
	}
	return &sweepLog{f: f}, nil
}

func (l *sweepLog) printf(format string, args ...any) {
	l.mu.Lock()
	defer l.mu.Unlock()
	line := fmt.Sprintf("%s pid %d ", time.Now().UTC().Format(time.RFC3339), os.Getpid()) + fmt.Sprintf(format, args...) + "\n"
	l.f.WriteString(line)
}

func (l *sweepLog) close() { l.f.Close() }

// pointFailure is a point that ended in an error.
type pointFailure struct {
	Name string
	Err  error
}

// sweepStats counts what runSweep did.
type sweepStats struct {
	Total, Skipped, Ran int
	Failed              []pointFailure // in point order
}

// runSweep runs every incomplete point of pl in dir with jobs workers.
// Each worker runs one point at a time with no shared mutable state; a
// failing point records its error in its folder and the others go on.
// progress, when non-nil, is advanced once per point.
func runSweep(dir string, pl *sweepPlan, jobs int, progress *progressbar.ProgressBar) (*sweepStats, error) {
	log, err := openSweepLog(dir)
	if err != nil {
		return nil, err
	}
	defer log.close()
	st := &sweepStats{Total: len(pl.Points)}
	var todo []int
	for i, p := range pl.Points {
		if pointComplete(filepath.Join(dir, sweepPointsDir, p.Name)) {
			st.Skipped++
			continue
		}
		todo = append(todo, i)
	}
	if progress != nil {
		progress.Describe("sweep (time left after the first runs)")
		if st.Skipped > 0 {
			progress.Add(st.Skipped)
		}
		progress.RenderBlank()
	}
	t0 := time.Now()
	log.printf("sweep: %d points, %d complete, %d to run with %d jobs", st.Total, st.Skipped, len(todo), jobs)
	type result struct {
		i   int
		err error
	}
	work := make(chan int)
	results := make(chan result)
	var wg sync.WaitGroup
	for range max(1, min(jobs, len(todo))) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range work {
				p := pl.Points[i]
				pd := filepath.Join(dir, sweepPointsDir, p.Name)
				log.printf("start %s", p.Name)
				err := runPoint(pd, pl.Images)
				results <- result{i, err}
			}
		}()
	}
	go func() {
		for _, i := range todo {
			work <- i
		}
		close(work)
		wg.Wait()
		close(results)
	}()
	errs := map[int]error{}
	for r := range results {
		p := pl.Points[r.i]
		pd := filepath.Join(dir, sweepPointsDir, p.Name)
		if r.err != nil {
			errs[r.i] = r.err
			msg := strings.ReplaceAll(r.err.Error(), "\n", " ")
			WriteFileAtomic(filepath.Join(pd, pointErrorFile), func(w io.Writer) error { _, err := fmt.Fprintln(w, msg); return err })
			log.printf("failed %s: %s", p.Name, msg)
		} else {
			st.Ran++
			log.printf("done %s", p.Name)
		}
		if progress != nil {
			// time left from the mean wall time per run so far (the
			// workers run side by side, so this counts them all)
			n := st.Ran + len(errs)
			left := time.Duration(float64(time.Since(t0)) / float64(n) * float64(len(todo)-n))
			progress.Describe(fmt.Sprintf("sweep, about %s left", left.Round(time.Second)))
			progress.Add(1)
		}
	}
	for _, i := range todo {
		if err, ok := errs[i]; ok {
			st.Failed = append(st.Failed, pointFailure{pl.Points[i].Name, err})
		}
	}
	return st, nil
}

// Scheduler files. The Slurm script runs one array task per point, each
// `gelspace run` on the point's config in its own folder; commands.txt has
// the same commands, one a line, for GNU parallel (`cd DIR && parallel <
// commands.txt`) or xargs. Both run from the sweep folder, with paths
// relative to it, so the folder can be copied to a cluster as it is.
func writeSchedulerFiles(dir string, pl *sweepPlan) error {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return err
	}
	render := ""
	if !pl.Images {
		render = " --no-render"
	}
	var list, cmds bytes.Buffer
	for _, p := range pl.Points {
		pd := sweepPointsDir + "/" + p.Name
		fmt.Fprintln(&list, pd)
		fmt.Fprintf(&cmds, "gelspace run %s/%s --out %s%s --quiet\n", pd, pointConfigFile, pd, render)
	}
	n := len(pl.Points)
	script := fmt.Sprintf(`#!/bin/bash
# Slurm job array for the gelspace sweep %[1]s: one array task per point,
# each running gelspace run on the point's config.toml in its folder.
#   sbatch %[2]s                      # from anywhere
#   sbatch --array=0-%[3]d%%50 %[2]s    # at most 50 tasks at once
# Clusters cap array sizes (Slurm's MaxArraySize, 1001 by default): split a
# larger sweep with --array=0-999 and --array=1000-1999 and so on.
# When every task has finished: gelspace sweep collect %[4]s
#SBATCH --job-name=gelspace-sweep
#SBATCH --array=0-%[3]d
#SBATCH --ntasks=1
#SBATCH --cpus-per-task=1
#SBATCH --output=%[9]s/points/slurm-%%A_%%a.out
set -euo pipefail
# The sweep folder; set GELSPACE_SWEEP_DIR where it was copied elsewhere
# (and edit the --output line above).
SWEEP_DIR=%[4]s
cd "${GELSPACE_SWEEP_DIR:-$SWEEP_DIR}"
GELSPACE="${GELSPACE:-gelspace}"
point="$(sed -n "$((SLURM_ARRAY_TASK_ID + 1))p" %[5]s)"
if [ -z "$point" ]; then
	echo "no point for array task $SLURM_ARRAY_TASK_ID (the sweep has %[6]d)" >&2
	exit 2
fi
exec "$GELSPACE" run "$point/%[7]s" --out "$point"%[8]s --quiet
`, filepath.Base(pl.Sweep), slurmScriptFile, n-1, shellQuote(abs), pointListFile, n, pointConfigFile, render, abs)
	files := []struct {
		name string
		data []byte
	}{
		{pointListFile, list.Bytes()},
		{commandsFile, cmds.Bytes()},
		{slurmScriptFile, []byte(script)},
	}
	for _, f := range files {
		data := f.data
		if err := WriteFileAtomic(filepath.Join(dir, f.name), func(w io.Writer) error { _, err := w.Write(data); return err }); err != nil {
			return err
		}
	}
	return os.Chmod(filepath.Join(dir, slurmScriptFile), 0o755)
}

// shellQuote quotes s for bash when it needs it.
func shellQuote(s string) string {
	if s != "" && !strings.ContainsAny(s, " \t\n'\"\\$`!*?[]{}()<>|&;#~") {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
