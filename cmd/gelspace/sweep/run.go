package sweep

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"time"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
	"gelspace/render"
)

// Names in a sweep folder.
const (
	PlanFile        = "sweep.json"
	LogFile         = "sweep.log"
	PointsDir       = "points"
	PointConfigFile = "config.toml"
	MarkerFile      = "done.json"
	PointErrorFile  = "error.txt"
	SlurmScriptFile = "slurm.sh"
	CommandsFile    = "commands.txt"
	PointListFile   = "points.txt"
)

// Plan is sweep.json: what collect needs to summarise the folder.
type Plan struct {
	Version    string      `json:"version"`
	Sweep      string      `json:"sweep"`
	Name       string      `json:"name,omitempty"`
	Base       string      `json:"base"`
	Replicates int         `json:"replicates"`
	Images     bool        `json:"images"`
	Axes       []PlanAxis  `json:"axes"`
	Points     []PlanPoint `json:"points"`
}

// PlanAxis is one swept key and its values (as text and, where numeric,
// as numbers: NaN is written as null).
type PlanAxis struct {
	Key    string     `json:"key"`
	Zip    bool       `json:"zip,omitempty"`
	Values []string   `json:"values"`
	Num    []*float64 `json:"num"`
}

// PlanPoint is one run: its folder, axis combination, replicate, seed and
// the index of each axis's value.
type PlanPoint struct {
	Name      string `json:"name"`
	Point     int    `json:"point"`
	Replicate int    `json:"replicate"`
	Seed      int64  `json:"seed"`
	Values    []int  `json:"values"`
	Hash      string `json:"config_sha256"`
}

// Marker is done.json, the completion marker of a point.
type Marker struct {
	ConfigSHA256 string  `json:"config_sha256"`
	Version      string  `json:"version"`
	PID          int     `json:"pid"`
	WallS        float64 `json:"wall_s"`
}

// NewPlan returns the plan of the sweep s with its points pts; images
// says whether each point writes its slices, plots and report.
func NewPlan(s *Spec, pts []Point, images bool) *Plan {
	pl := &Plan{Version: run.Version, Sweep: s.File, Name: s.Name, Base: s.Base, Replicates: s.Replicates, Images: images}
	if pl.Base == "" {
		pl.Base = configs.DefaultName
	}
	for _, a := range s.Axes {
		pa := PlanAxis{Key: a.Key, Zip: a.Table == "zip", Values: a.Text}
		for _, x := range a.Num {
			if x == x {
				v := x
				pa.Num = append(pa.Num, &v)
			} else {
				pa.Num = append(pa.Num, nil)
			}
		}
		pl.Axes = append(pl.Axes, pa)
	}
	for _, p := range pts {
		pl.Points = append(pl.Points, PlanPoint{Name: p.Name, Point: p.Point, Replicate: p.Replicate, Seed: p.Seed, Values: p.Values, Hash: configHash(p.Config)})
	}
	return pl
}

// WritePlan lays out the sweep folder: sweep.json and every point's
// config.toml (rewritten only when it changed, so a complete point keeps
// its marker valid).
func WritePlan(dir string, pl *Plan, pts []Point) error {
	return WritePlanForce(dir, pl, pts, false)
}

// WritePlanForce is WritePlan; with force, a folder made from another
// sweep file is taken over: the point folders not in the new plan are
// removed and the others rerun where their config changed.
func WritePlanForce(dir string, pl *Plan, pts []Point, force bool) error {
	if old, err := ReadPlan(dir); err == nil && old.Sweep != "" {
		if !force && (filepath.Base(old.Sweep) != filepath.Base(pl.Sweep) || old.Name != pl.Name) {
			return &configs.InputError{File: dir, Msg: fmt.Sprintf("folder holds a sweep made from another sweep file (%s); use --force to replace it, or another --out", configs.Snippet(filepath.Base(old.Sweep)))}
		}
		if force {
			keep := map[string]bool{}
			for _, p := range pts {
				keep[p.Name] = true
			}
			for _, p := range old.Points {
				if !keep[p.Name] && p.Name != "" && !strings.ContainsAny(p.Name, `/\`) {
					os.RemoveAll(filepath.Join(dir, PointsDir, p.Name))
				}
			}
		}
	}
	if err := os.MkdirAll(filepath.Join(dir, PointsDir), 0o755); err != nil {
		return err
	}
	if old, err := ReadPlan(dir); err == nil && old.Sweep != "" && !force {
		// A folder of another sweep is refused rather than mixed.
		if len(old.Axes) != len(pl.Axes) {
			return &configs.InputError{Msg: fmt.Sprintf("sweep: %s holds a sweep with other axes (%s); use another --out", dir, axisKeys(old))}
		}
		for i := range old.Axes {
			if old.Axes[i].Key != pl.Axes[i].Key {
				return &configs.InputError{Msg: fmt.Sprintf("sweep: %s holds a sweep with other axes (%s); use another --out", dir, axisKeys(old))}
			}
		}
	}
	for _, p := range pts {
		pd := filepath.Join(dir, PointsDir, p.Name)
		if err := os.MkdirAll(pd, 0o755); err != nil {
			return err
		}
		path := filepath.Join(pd, PointConfigFile)
		if old, err := readSmall(path); err == nil && bytes.Equal(old, p.Config) {
			continue
		}
		os.Remove(filepath.Join(pd, MarkerFile))
		cfgText := p.Config
		if err := render.WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(cfgText); return err }); err != nil {
			return err
		}
	}
	return render.WriteFileAtomic(filepath.Join(dir, PlanFile), func(w io.Writer) error { return run.WriteJSON(w, pl) })
}

func axisKeys(pl *Plan) string {
	var k []string
	for _, a := range pl.Axes {
		k = append(k, a.Key)
	}
	return strings.Join(k, ", ")
}

// readSmall reads a file of a sweep folder (the plan, a point's
// config.toml, done.json, summary.json or run.json): only a regular text
// file of at most 256 MiB, so that a device or a runaway file put in
// their place is refused rather than read without end.
func readSmall(path string) ([]byte, error) {
	return configs.ReadLimited(path, "sweep file", 256<<20)
}

// ReadPlan reads the plan (sweep.json) of the sweep folder dir.
func ReadPlan(dir string) (*Plan, error) {
	path := filepath.Join(dir, PlanFile)
	data, err := readSmall(path)
	if err != nil {
		why := ""
		var ie *configs.InputError
		if errors.As(err, &ie) && !strings.HasSuffix(ie.Msg, "no such file") {
			why = " (" + strings.TrimPrefix(ie.Msg, "cannot read sweep file: ") + ")"
		}
		return nil, &configs.InputError{File: path, Msg: "cannot read the sweep plan" + why + ": is this a gelspace sweep folder (made by gelspace sweep or sweep plan)?"}
	}
	var pl Plan
	if err := json.Unmarshal(data, &pl); err != nil {
		return nil, &configs.InputError{File: path, Msg: "malformed sweep plan: " + err.Error()}
	}
	return &pl, nil
}

// pointComplete reports whether the point folder's marker matches its
// config.toml.
func pointComplete(pd string) bool {
	cfg, err := readSmall(filepath.Join(pd, PointConfigFile))
	if err != nil {
		return false
	}
	data, err := readSmall(filepath.Join(pd, MarkerFile))
	if err != nil {
		return false
	}
	var m Marker
	if json.Unmarshal(data, &m) != nil {
		return false
	}
	return m.ConfigSHA256 == configHash(cfg) && m.Version == run.Version
}

// writeMarker writes done.json, the last file of a complete point.
func writeMarker(pd string, wallS float64) error {
	cfg, err := readSmall(filepath.Join(pd, PointConfigFile))
	if err != nil {
		return err
	}
	m := Marker{ConfigSHA256: configHash(cfg), Version: run.Version, PID: os.Getpid(), WallS: wallS}
	return render.WriteFileAtomic(filepath.Join(pd, MarkerFile), func(w io.Writer) error { return run.WriteJSON(w, m) })
}

// runPoint runs one point in its folder as gelspace run would run its
// config.toml, and writes the marker when every output is in place.
func runPoint(pd string, images bool) error {
	os.Remove(filepath.Join(pd, MarkerFile))
	os.Remove(filepath.Join(pd, PointErrorFile))
	// temporary files of an earlier, killed attempt
	if tmp, err := filepath.Glob(filepath.Join(pd, ".*.tmp-*")); err == nil {
		for _, p := range tmp {
			os.Remove(p)
		}
	}
	start := time.Now()
	cfg, err := configs.Load(filepath.Join(pd, PointConfigFile), nil)
	if err != nil {
		return err
	}
	if _, err := run.Run(cfg, run.Options{Out: pd, Images: images, Force: true}); err != nil {
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
	f, err := os.OpenFile(filepath.Join(dir, LogFile), os.O_APPEND|os.O_CREATE|os.O_WRONLY, 0o644)
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

// Failure is a point that ended in an error.
type Failure struct {
	Name string
	Err  error
}

// Stats counts what Run did.
type Stats struct {
	Total, Skipped, Ran int
	Failed              []Failure // in point order
}

// Run runs every incomplete point of pl in dir with jobs workers.
// Each worker runs one point at a time with no shared mutable state; a
// failing point records its error in its folder and the others go on.
// progress, when non-nil, is called once before the first point is run,
// with done the number of points already complete and left -1, and then
// after every point, with the estimated wall time left.
func Run(dir string, pl *Plan, jobs int, progress func(done, total int, left time.Duration)) (*Stats, error) {
	log, err := openSweepLog(dir)
	if err != nil {
		return nil, err
	}
	defer log.close()
	st := &Stats{Total: len(pl.Points)}
	var todo []int
	for i, p := range pl.Points {
		if pointComplete(filepath.Join(dir, PointsDir, p.Name)) {
			st.Skipped++
			continue
		}
		todo = append(todo, i)
	}
	if progress != nil {
		progress(st.Skipped, st.Total, -1)
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
				pd := filepath.Join(dir, PointsDir, p.Name)
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
		pd := filepath.Join(dir, PointsDir, p.Name)
		if r.err != nil {
			errs[r.i] = r.err
			msg := strings.ReplaceAll(r.err.Error(), "\n", " ")
			render.WriteFileAtomic(filepath.Join(pd, PointErrorFile), func(w io.Writer) error { _, err := fmt.Fprintln(w, msg); return err })
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
			progress(st.Skipped+n, st.Total, left)
		}
	}
	for _, i := range todo {
		if err, ok := errs[i]; ok {
			st.Failed = append(st.Failed, Failure{pl.Points[i].Name, err})
		}
	}
	return st, nil
}

// Scheduler files. The Slurm script runs one array task per point, each
// `gelspace run` on the point's config in its own folder; commands.txt has
// the same commands, one a line, for GNU parallel (`cd DIR && parallel <
// commands.txt`) or xargs. Both run from the sweep folder, with paths
// relative to it, so the folder can be copied to a cluster as it is.
func WriteSchedulerFiles(dir string, pl *Plan) error {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return err
	}
	noRender := ""
	if !pl.Images {
		noRender = " --no-render"
	}
	var list, cmds bytes.Buffer
	for _, p := range pl.Points {
		pd := PointsDir + "/" + p.Name
		fmt.Fprintln(&list, pd)
		fmt.Fprintf(&cmds, "gelspace run %s/%s --out %s%s --quiet\n", pd, PointConfigFile, pd, noRender)
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
`, filepath.Base(pl.Sweep), SlurmScriptFile, n-1, shellQuote(abs), PointListFile, n, PointConfigFile, noRender, abs)
	files := []struct {
		name string
		data []byte
	}{
		{PointListFile, list.Bytes()},
		{CommandsFile, cmds.Bytes()},
		{SlurmScriptFile, []byte(script)},
	}
	for _, f := range files {
		data := f.data
		if err := render.WriteFileAtomic(filepath.Join(dir, f.name), func(w io.Writer) error { _, err := w.Write(data); return err }); err != nil {
			return err
		}
	}
	return os.Chmod(filepath.Join(dir, SlurmScriptFile), 0o755)
}

// shellQuote quotes s for bash when it needs it.
func shellQuote(s string) string {
	if s != "" && !strings.ContainsAny(s, " \t\n'\"\\$`!*?[]{}()<>|&;#~") {
		return s
	}
	return "'" + strings.ReplaceAll(s, "'", `'\''`) + "'"
}
