package main

import (
	"bytes"
	"encoding/json"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gelspace/cmd/gelspace/run"
	"gelspace/kinetics"
	"gelspace/voxel"
)

// TestAnalyzeNumPyFromPython reads a volume that NumPy itself wrote (see
// testdata/volumes/README.md), maps its labels and checks the JSON
// contract and the porosity against a count of the labels.
func TestAnalyzeNumPyFromPython(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "volumes", "numpy-le-i4.npy")
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	phase, nx, ny, nz, err := voxel.ReadNPY(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	pores := 0
	labels := map[uint8]bool{}
	for _, p := range phase {
		labels[p] = true
		if kinetics.IsPore(p) {
			pores++
		}
	}
	// Map every label: pores to pore, C-S-H to csh, the rest to solid.
	var parts []string
	for l := range labels {
		class := "solid"
		switch {
		case kinetics.IsPore(l):
			class = "pore"
		case l == kinetics.CSHInner || l == kinetics.CSHOuter:
			class = "csh"
		}
		parts = append(parts, strconv.Itoa(int(l))+"="+class)
	}
	var out bytes.Buffer
	var stderr bytes.Buffer
	if code := Main([]string{"analyze", path, "--map", strings.Join(parts, ","), "--json"}, &out, &stderr); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr.String())
	}
	var rep map[string]any
	if err := json.Unmarshal(out.Bytes(), &rep); err != nil {
		t.Fatalf("not JSON: %v\n%s", err, out.String())
	}
	for _, k := range []string{"porosity", "pores_connected_fraction", "pores_span_axes", "solids_connected_fraction", "solids_span_axes", "rel_diffusivity"} {
		if _, ok := rep[k]; !ok {
			t.Errorf("--json lacks %q", k)
		}
	}
	want := float64(pores) / float64(nx*ny*nz)
	if got := rep["porosity"].(float64); math.Abs(got-want) > 1e-12 {
		t.Errorf("porosity %g, labels say %g", got, want)
	}
	if d := rep["rel_diffusivity"].([]any); len(d) != 3 {
		t.Errorf("rel_diffusivity has %d entries, want 3", len(d))
	}
}

// TestAnalyzeRefusesUnmappedLabels: labels an imported image holds but the
// map does not name are refused with exit 2.
func TestAnalyzeRefusesUnmappedLabels(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "volumes", "numpy-le-i4.npy")
	var stderr bytes.Buffer
	if code := Main([]string{"analyze", path, "--map", "0=pore"}, io.Discard, &stderr); code != 2 || !strings.Contains(stderr.String(), "not in --map") {
		t.Errorf("exit %d: %s", code, stderr.String())
	}
	if code := Main([]string{"analyze", path, "--map", "0=lava"}, io.Discard, &stderr); code != 2 {
		t.Errorf("unknown class: exit %d", code)
	}
}

// TestAnalyzeOwnVolume: analyze on a run's final volume reproduces the
// connectivity the run reported at its last age (same periodic box, same
// bond rule through the particle ids).
func TestAnalyzeOwnVolume(t *testing.T) {
	cfg := writeConfig(t, runConfig)
	out := filepath.Join(t.TempDir(), "run")
	mustRun(t, "run", cfg, "--out", out, "--no-render", "-q")
	var buf bytes.Buffer
	if code := Main([]string{"analyze", filepath.Join(out, "final.vti"), "--json"}, &buf, io.Discard); code != 0 {
		t.Fatalf("analyze exit %d", code)
	}
	var rep run.Analysis
	if err := json.Unmarshal(buf.Bytes(), &rep); err != nil {
		t.Fatal(err)
	}
	var sum run.Summary
	data, _ := os.ReadFile(filepath.Join(out, "summary.json"))
	json.Unmarshal(data, &sum)
	// The run's porosity is of the paste: the box and the carried coarse
	// grains' outlines, whose virtual pores the volume does not hold.
	paste := rep.Porosity*(1-sum.Carried.PasteVolumeFraction) + sum.Carried.VirtualPoreFraction
	if sum.Carried.MassFraction <= 0 || math.Abs(paste-sum.Final.CapillaryPorosity) > 1e-9 || sum.Final.SolidsConnected == nil ||
		math.Abs(rep.SolidsConnectedFraction-*sum.Final.SolidsConnected) > 1e-9 || math.Abs(rep.PoresConnectedFraction-*sum.Final.PoresConnected) > 1e-9 {
		t.Errorf("analyze %+v differs from the run's final row %+v", rep, sum.Final)
	}
}

// TestRenderCommand writes slices at chosen planes and refuses a plane
// outside the box.
func TestRenderCommand(t *testing.T) {
	vol := filepath.Join("..", "..", "testdata", "volumes", "gelspace-12.vti")
	out := filepath.Join(t.TempDir(), "pics")
	mustRun(t, "render", vol, "--z", "3", "--out", out, "-q")
	for _, f := range []string{"slice_xy_z003_phase.png", "slice_xz_y006_bse.png", "cutaway_phase.png"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing %s", f)
		}
	}
	if code := Main([]string{"render", vol, "--x", "12", "--out", out}, io.Discard, io.Discard); code != 2 {
		t.Errorf("--x 12 in a 12-voxel box: exit %d, want 2", code)
	}
}
