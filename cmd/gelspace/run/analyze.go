package run

import (
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"strings"

	"gelspace/configs"

	"gelspace/percolation"
	"gelspace/render"
	"gelspace/voxel"
)

// Analysis is the measurement of a volume, as gelspace analyze --json
// prints it (its JSON keys are a stable interface).
type Analysis struct {
	Volume                  string             `json:"volume"`
	Dims                    [3]int             `json:"dims"`
	VoxelUM                 float64            `json:"voxel_um"`
	Periodic                bool               `json:"periodic"`
	Porosity                float64            `json:"porosity"`
	PoresConnectedFraction  float64            `json:"pores_connected_fraction"`
	PoresSpanAxes           []string           `json:"pores_span_axes"`
	SolidsConnectedFraction float64            `json:"solids_connected_fraction"`
	SolidsSpanAxes          []string           `json:"solids_span_axes"`
	RelDiffusivity          [3]float64         `json:"rel_diffusivity"`
	FormationFactor         [3]*float64        `json:"formation_factor"` // null: no conducting path
	PhaseFractions          map[string]float64 `json:"phase_fractions"`
}

// axesNames lists the axes marked in span as "x", "y", "z".
func axesNames(span [3]bool) []string {
	out := []string{}
	for a, s := range span {
		if s {
			out = append(out, string("xyz"[a]))
		}
	}
	return out
}

// Analyze measures a volume: porosity, connectivity of pores and solids
// (with the spanning axes), D/D0 per axis with the relative residual tol,
// and the phase fractions.
func Analyze(box percolation.Box, g *voxel.Grid, tol float64) (*Analysis, error) {
	pores := percolation.Pores(box, g.Phase)
	solids := percolation.Solids(box, g.Phase, g.Particle)
	d, err := percolation.Diffusivity(box, g.Phase, percolation.DiffusivityOptions{Tol: tol})
	if err != nil {
		return nil, fmt.Errorf("analyze: diffusivity: %w", err)
	}
	rep := &Analysis{Dims: [3]int{g.NX, g.NY, g.NZ}, VoxelUM: g.VoxelUM, Periodic: box.Periodic[0],
		Porosity:                float64(pores.Voxels) / float64(g.Len()),
		PoresConnectedFraction:  pores.Fraction,
		PoresSpanAxes:           axesNames(pores.Span),
		SolidsConnectedFraction: solids.Fraction,
		SolidsSpanAxes:          axesNames(solids.Span),
		RelDiffusivity:          d.Rel,
		PhaseFractions:          map[string]float64{},
	}
	for a := range 3 {
		if !math.IsInf(d.Formation[a], 0) {
			rep.FormationFactor[a] = ptr(d.Formation[a])
		}
	}
	cnt := g.Count()
	for id, n := range cnt {
		if n > 0 {
			rep.PhaseFractions[render.PhaseLabel(uint8(id))] = float64(n) / float64(g.Len())
		}
	}
	return rep, nil
}

// Memory per voxel of a volume read by gelspace analyze and render, on top
// of the file itself (a .vti is held whole while decoded): the phase and
// particle arrays (5 bytes) and their decoded copy; analyze adds the pore
// and solid labelling and the D/D0 solver (as a run's diffusivity step).
const (
	readBytesPerVoxel    = 10
	analyzeBytesPerVoxel = readBytesPerVoxel + 30 + diffBytesPerVoxel
	renderBytesPerVoxel  = readBytesPerVoxel + 2
)

// VolumeError is the InputError for a volume that cannot be read: one
// line naming the file once ("scan.npy: cannot read volume: …").
func VolumeError(path string, err error) *configs.InputError {
	var pe *fs.PathError
	msg := err.Error()
	if errors.As(err, &pe) && pe.Path == path {
		msg = pe.Err.Error()
	}
	msg = strings.TrimPrefix(msg, path+": ")
	return &configs.InputError{File: path, Msg: "cannot read volume: " + msg}
}

// LoadVolume reads the volume at path for a command (analyze or render):
// first only its header (voxel.StatVolume), to refuse before allocating
// a volume whose reading and processing would not fit in the memory
// available, then the whole file. Errors are *configs.InputError.
func LoadVolume(path, command string) (*voxel.Grid, error) {
	nx, ny, nz, err := voxel.StatVolume(path)
	if err != nil {
		return nil, VolumeError(path, err)
	}
	per := float64(renderBytesPerVoxel)
	if command == "analyze" {
		per = analyzeBytesPerVoxel
	}
	var size int64
	if st, err := os.Stat(path); err == nil {
		size = st.Size()
	}
	n := float64(nx) * float64(ny) * float64(nz)
	need, avail := float64(size)+n*per, float64(configs.AvailableBytes())
	if need > avail {
		return nil, &configs.InputError{File: path, Msg: fmt.Sprintf("%d×%d×%d voxels: %s needs about %.1f GB and %.1f GB is available: crop or coarsen the volume",
			nx, ny, nz, command, need/1e9, avail/1e9)}
	}
	g, err := voxel.ReadVolume(path)
	if err != nil {
		return nil, VolumeError(path, err)
	}
	return g, nil
}
