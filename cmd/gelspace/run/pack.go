package run

import (
	"fmt"
	"io"
	"os"
	"path/filepath"

	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/render"
	"gelspace/voxel"
)

// Pack packs the box of a resolved mix: the initial microstructure at the
// mix's w/c, seeded by the config's seed. A packing that cannot be
// done is a *configs.InputError on [pack].
func Pack(m *Mix) (*voxel.PackResult, error) {
	c := m.Cfg
	n := c.Box.Voxels
	pops := m.Populations(n * n * n)
	res, err := voxel.Pack(voxel.PackSpec{NX: n, NY: n, NZ: n, VoxelUM: c.Box.VoxelUM, Classes: m.Classes, Pops: pops,
		SpacingVoxels: c.Pack.SpacingVoxels(c.Box.VoxelUM), DomainUM: c.Pack.PhaseDomainUM, Seed: uint64(c.Seed)})
	if err != nil {
		if pe, ok := err.(*voxel.PackError); ok {
			return nil, &configs.InputError{File: c.Source, Key: "pack", Msg: pe.Msg}
		}
		return nil, err
	}
	return res, nil
}

// clinkerGrains maps pack.clinker_grains to the packing's mineralogy.
func clinkerGrains(p configs.Pack) voxel.ClinkerGrains {
	if p.ClinkerGrains == configs.Monomineral {
		return voxel.Monomineral
	}
	return voxel.Polymineral
}

// SolidFraction is the volume fraction of solid voxels in g, 0–1.
func SolidFraction(g *voxel.Grid) float64 {
	s := 0
	for _, p := range g.Phase {
		if kinetics.IsSolid(p) {
			s++
		}
	}
	return float64(s) / float64(g.Len())
}

// PackReport is pack.json.
type PackReport struct {
	Version       string            `json:"version"`
	Seed          int64             `json:"seed"`
	Mix           MixReport         `json:"mix"`
	Pack          configs.Pack      `json:"pack"`
	Voxels        [3]int            `json:"voxels_xyz"`
	VoxelUM       float64           `json:"voxel_um"`
	Phases        []PhaseFit        `json:"phases"`
	SolidTarget   float64           `json:"solid_fraction_target"`
	SolidAchieved float64           `json:"solid_fraction_achieved"`
	Particles     int               `json:"particles"`
	SurfaceVoxel  float64           `json:"specific_surface_packed_m2_per_kg"`
	MedianVoxels  float64           `json:"packed_median_diameter_voxels"`
	ClassCounts   map[string][]int  `json:"particles_per_diameter"`
	Attempts      int64             `json:"placement_trials"`
	Scans         int               `json:"placement_scans"`
	WallS         float64           `json:"wall_s"`
	Files         map[string]string `json:"files"`
	Notes         map[string]string `json:"notes"`
}

// PhaseFit compares a phase's target and achieved volume fraction.
type PhaseFit struct {
	Key            string  `json:"key"`
	TargetFraction float64 `json:"target_fraction"`
	Achieved       float64 `json:"achieved_fraction"`
	TargetVoxels   int     `json:"target_voxels"`
	Voxels         int     `json:"voxels"`
}

// NewPackReport returns pack.json's content for a packed box; wall is the
// packing's wall-clock time, s.
func NewPackReport(m *Mix, res *voxel.PackResult, wall float64) PackReport {
	g := res.Grid
	n := float64(g.Len())
	cnt := g.Count()
	c := m.Cfg
	pops := m.Populations(g.Len())
	rep := PackReport{Version: Version, Seed: c.Seed, Mix: m.Report(), Pack: c.Pack, Voxels: [3]int{g.NX, g.NY, g.NZ},
		VoxelUM: g.VoxelUM, SolidTarget: 1 - m.Box[kinetics.Water], SolidAchieved: SolidFraction(g), Particles: len(res.Diameter) - 1,
		SurfaceVoxel: voxel.SpecificSurfaceM2PerKg(g), Attempts: res.Attempts, Scans: res.Scans, WallS: wall,
		ClassCounts: map[string][]int{},
		Files: map[string]string{"pack.vti": "VTK XML ImageData, cell arrays phase (UInt8) and particle (Int32)",
			"pack.npy": "NumPy uint8 phase ids, C order, shape (z, y, x)", "phases.csv": "phase ids, names, densities, colours"},
		Notes: map[string]string{
			"target_fraction":   "phase volume fraction of the fresh paste from the mass fractions, the phase densities and w/c",
			"fines":             "the powder finer than one voxel is merged into the 1-voxel class",
			"truncation":        "particles are at most half the box edge; the coarser powder is not packed but carried by the engine as shrinking spheres outside the lattice (see the mix's psd.carried_fraction), so the lattice holds all the mix's water and the finer powder: its solid fraction target is below the paste's",
			"specific_surface":  "exposed voxel faces (solid next to pore) of the packed box, m² per kg of powder; voxel faces overstate the surface from the PSD (smooth spheres), and neither is a Blaine fineness",
			"packed_median":     "volume-weighted median of the particles' class diameters",
			"particle_ids":      "1, 2, … in placement order (largest first); 0 is the original water space",
			"phase_assignments": "clinker grains are shared among C3S, C2S, C3A and C4AF by a periodic value-noise field with cells of pack.phase_domain_um and exact quantile thresholds, unless pack.clinker_grains = \"monomineral\"",
		}}
	// An SCM's inert part shares the SCM's particles and is counted there,
	// apart from the cement's own inert filler.
	var inPop [256][kinetics.NumIDs]int
	if len(m.SCMs) > 0 {
		for i, ph := range g.Phase {
			if p := g.Particle[i]; p > 0 && int(p) < len(res.Pop) {
				inPop[res.Pop[p]][ph]++
			}
		}
	}
	for pi, p := range pops {
		sm := m.scmOf(p)
		for k, id := range p.Phases {
			key, target, got := kinetics.Lookup(id).Key, m.Box[id], cnt[id]
			if sm != nil || (id == kinetics.Inert && len(m.SCMs) > 0) {
				got = inPop[pi][id]
			}
			if sm != nil {
				target = sm.BoxGlass
				if id == kinetics.Inert {
					key, target = "inert ("+sm.Kind.Key+")", sm.BoxCryst
				}
			}
			rep.Phases = append(rep.Phases, PhaseFit{Key: key, TargetFraction: target,
				Achieved: float64(got) / n, TargetVoxels: p.Voxels[k], Voxels: got})
		}
	}
	rep.Phases = append(rep.Phases, PhaseFit{Key: "water", TargetFraction: m.Box[kinetics.Water],
		Achieved: float64(cnt[kinetics.Water]) / n, TargetVoxels: g.Len() - sumTargets(pops), Voxels: cnt[kinetics.Water]})
	for pi, p := range pops {
		name := kinetics.Lookup(p.Phases[0]).Key
		if len(p.Phases) > 1 && kinetics.IsAnhydrous(p.Phases[0]) && kinetics.Lookup(p.Phases[0]).Role == kinetics.RoleClinker {
			name = "clinker"
		}
		rep.ClassCounts[name] = res.Counts[pi]
	}
	// volume-weighted median class diameter of the packed particles
	maxD := 0
	for id := 1; id < len(res.Diameter); id++ {
		maxD = max(maxD, int(res.Diameter[id]))
	}
	vol := make([]int, maxD+1)
	total := 0
	for id := 1; id < len(res.Diameter); id++ {
		d := int(res.Diameter[id])
		vol[d] += voxel.SphereVoxels(d)
		total += voxel.SphereVoxels(d)
	}
	acc := 0
	for d, v := range vol {
		acc += v
		if 2*acc >= total && total > 0 {
			rep.MedianVoxels = float64(d)
			break
		}
	}
	return rep
}

// scmOf returns the SCM whose particles population p is, or nil.
func (m *Mix) scmOf(p voxel.Population) *SCMMix {
	for i := range m.SCMs {
		if p.Phases[0] == m.SCMs[i].Kind.Phase {
			return &m.SCMs[i]
		}
	}
	return nil
}

func sumTargets(pops []voxel.Population) int {
	s := 0
	for _, p := range pops {
		s += p.Total()
	}
	return s
}

// WritePack writes the four pack files into dir, each atomically.
func WritePack(dir string, m *Mix, res *voxel.PackResult, wall float64) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	g := res.Grid
	steps := []struct {
		name  string
		write func(w io.Writer) error
	}{
		{"pack.vti", func(w io.Writer) error { return voxel.WriteVTI(w, g) }},
		{"pack.npy", func(w io.Writer) error { return voxel.WriteNPY(w, g) }},
		{"phases.csv", WritePhasesCSV},
		{"pack.json", func(w io.Writer) error { return WriteJSON(w, NewPackReport(m, res, wall)) }},
	}
	for _, s := range steps {
		if err := render.WriteFileAtomic(filepath.Join(dir, s.name), s.write); err != nil {
			return err
		}
	}
	return nil
}

// WritePhasesCSV writes the phase table: id, key, name, role, density,
// colour hex and grey level.
func WritePhasesCSV(w io.Writer) error {
	if _, err := fmt.Fprintln(w, "id,key,name,role,density_g_per_cm3,colour,grey"); err != nil {
		return err
	}
	for _, p := range kinetics.Phases() {
		grey := render.Grey(&p)
		c := p.Colour
		if _, err := fmt.Fprintf(w, "%d,%s,%q,%s,%g,#%02x%02x%02x,%d\n", p.ID, p.Key, p.Name, p.Role, p.DensityGPerCM3, c.R, c.G, c.B, grey); err != nil {
			return err
		}
	}
	return nil
}
