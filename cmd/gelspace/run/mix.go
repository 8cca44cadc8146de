package run

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"
	"unicode/utf8"

	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/voxel"
)

// Mix is a config resolved into chemistry and sizes.
type Mix struct {
	Cfg *configs.Config
	// Comp is the binder: the cement and, for a blend, its SCMs (each
	// SCM's amorphous part as its reactive phase, the rest as inert).
	Comp *kinetics.Composition
	// Cement is the cement alone (Comp without SCMs).
	Cement  *kinetics.Composition
	SCMs    []SCMMix
	Bogue   *kinetics.BoguePhases // nil when the phases were given
	PSD     *voxel.PSD
	Classes *voxel.Classes
	// SolidFraction is the initial solid volume fraction at Cfg.Mix.WC.
	SolidFraction float64
	// Paste is the volume fraction of each phase in the fresh paste.
	Paste [kinetics.NumIDs]float64
	// CementPaste is Paste less the SCMs' particles: the cement's share.
	CementPaste [kinetics.NumIDs]float64

	// Box is the volume fraction of each phase in the lattice: all the
	// mix's water and the powder fine enough for the box. The powder
	// coarser than the box's largest class is carried by the engine
	// (voxel.Engine.Carry): Carried is its volume per phase per lattice
	// voxel, CoarseBins its size classes.
	Box, Carried [kinetics.NumIDs]float64
	CoarseBins   []voxel.CoarseBin
}

// SCMMix is one SCM of a resolved blend.
type SCMMix struct {
	Index     int // position in cfg.SCM
	Kind      *kinetics.SCMKind
	MassFrac  float64 // of the binder
	Amorphous float64 // reactive share of the powder, 0–1
	SubVoxel  bool
	PSD       *voxel.PSD
	Classes   *voxel.Classes
	// PasteGlass and PasteCryst are the fresh-paste volume fractions of
	// its reactive and inert parts.
	PasteGlass, PasteCryst float64
	// DensityGPerCM3 is the particle density (reactive and inert parts).
	DensityGPerCM3 float64
	// SurfacePerUM is the PSD's specific surface per volume, µm⁻¹.
	SurfacePerUM float64
	// BoxGlass and BoxCryst are the same as fractions of the lattice (the
	// cement's carried coarse grains left out).
	BoxGlass, BoxCryst float64
}

// resolveSCMs adds the SCMs of a blend to m (after m.Cement is set).
func (m *Mix) resolveSCMs() error {
	cfg := m.Cfg
	var parts []kinetics.BlendPart
	for i, s := range cfg.SCM {
		k := kinetics.SCMKindByKey(s.Kind)
		sm := SCMMix{Index: i, Kind: k, MassFrac: s.MassPercent / 100, Amorphous: s.Amorphous(), SubVoxel: s.SubVoxel()}
		var err error
		if sm.PSD, err = cfg.ResolvePSD(i); err != nil {
			return err
		}
		sm.SurfacePerUM = configs.SurfacePerUM(sm.PSD)
		if sm.SubVoxel {
			// Sub-voxel powder: single-voxel agglomerates whatever its sizes.
			sm.Classes = &voxel.Classes{VoxelUM: cfg.Box.VoxelUM, MaxDiameter: 1, Fraction: []float64{0, 1}, FinerThanVoxel: sm.PSD.Passing(cfg.Box.VoxelUM)}
		} else {
			if sm.Classes, err = sm.PSD.Classes(cfg.Box.VoxelUM, cfg.Box.Voxels); err != nil {
				return cfg.Errorf(fmt.Sprintf("scm.%d.psd", i), "%v", err)
			}
			if f := sm.Classes.FinerThanVoxel; f > configs.MaxFinerThanVoxel {
				return cfg.Errorf(fmt.Sprintf("scm.%d.psd", i), "%.0f %% of the %s is finer than one voxel (%g µm), more than particles can represent (at most %.0f %%): give scm.%d.representation = \"subvoxel\" to carry it as sub-voxel powder that reacts by its own specific surface, or a smaller box.voxel_um",
					100*f, s.Kind, cfg.Box.VoxelUM, 100*configs.MaxFinerThanVoxel, i)
			}
		}
		ph := kinetics.Lookup(k.Phase)
		inert := kinetics.Lookup(kinetics.Inert)
		sm.DensityGPerCM3 = 1 / (sm.Amorphous/ph.DensityGPerCM3 + (1-sm.Amorphous)/inert.DensityGPerCM3)
		m.SCMs = append(m.SCMs, sm)
		parts = append(parts, kinetics.BlendPart{Phase: k.Phase, MassFrac: sm.MassFrac, Amorphous: sm.Amorphous})
	}
	b, err := m.Cement.Blend(parts)
	if err != nil {
		return cfg.Errorf("scm", "%v", err)
	}
	m.Comp = b
	return nil
}

// Populations splits the fresh paste into particle populations for a box
// of n voxels: the cement's (voxel.Populations) and one per SCM with its
// own sizes, its reactive and inert parts sharing its particles.
func (m *Mix) Populations(n int) []voxel.Population {
	pops := voxel.Populations(m.Box, n, clinkerGrains(m.Cfg.Pack))
	for _, s := range m.SCMs {
		glass := int(math.Round(s.BoxGlass * float64(n)))
		cryst := int(math.Round(s.BoxCryst * float64(n)))
		if glass == 0 && cryst == 0 {
			continue
		}
		p := voxel.Population{Phases: []kinetics.ID{s.Kind.Phase}, Voxels: []int{glass}, Classes: s.Classes}
		if cryst > 0 {
			p.Phases = append(p.Phases, kinetics.Inert)
			p.Voxels = append(p.Voxels, cryst)
		}
		pops = append(pops, p)
	}
	return pops
}

// Resolve turns a validated config into a Mix: the composition (Bogue
// where oxides are given), the PSD (reading the table file) and its
// digitisation for the box.
func Resolve(cfg *configs.Config) (*Mix, error) {
	m := &Mix{Cfg: cfg}
	var err error
	if cfg.Cement.Phases != nil {
		if m.Comp, err = kinetics.NewComposition(cfg.Cement.Phases); err != nil {
			return nil, cfg.Errorf("cement.phases", "%v", err)
		}
	} else {
		o, err := kinetics.OxidesFromMap(cfg.Cement.Oxides)
		if err != nil {
			return nil, cfg.Errorf("cement.oxides", "%v", err)
		}
		split, err := kinetics.SulfateSplitFromMap(cfg.Cement.Sulfate)
		if err != nil {
			return nil, cfg.Errorf("cement.sulfate", "%v", err)
		}
		c, b, err := kinetics.CompositionFromOxides(o, split)
		if err != nil {
			return nil, cfg.Errorf("cement.oxides", "%v", err)
		}
		m.Comp, m.Bogue = c, &b
	}
	if rr := cfg.PSD.RosinRammler; rr != nil {
		if m.PSD, err = voxel.RosinRammler(rr.XUM, rr.N); err != nil {
			return nil, cfg.Errorf("psd.rosin_rammler", "%v", err)
		}
	} else {
		path := cfg.PSD.Table
		if !filepath.IsAbs(path) {
			path = filepath.Join(cfg.Dir, path)
		}
		data, err := configs.ReadInput(path, "PSD table")
		if err != nil {
			return nil, cfg.Errorf("psd.table", "%v", err)
		}
		m.PSD, err = voxel.ReadPSDTable(bytes.NewReader(data))
		if err != nil {
			return nil, cfg.Errorf("psd.table", "%s: %s", path, clip(err.Error()))
		}
	}
	if m.Classes, err = m.PSD.Classes(cfg.Box.VoxelUM, cfg.Box.Voxels); err != nil {
		return nil, cfg.Errorf("psd", "%v", err)
	}
	m.Cement = m.Comp
	if err := m.resolveSCMs(); err != nil {
		return nil, err
	}
	m.SolidFraction = m.Comp.SolidVolumeFraction(cfg.Mix.WC)
	m.Paste = m.Comp.PasteVolumeFractions(cfg.Mix.WC)
	m.CementPaste = m.Paste
	inert := kinetics.Lookup(kinetics.Inert).DensityGPerCM3
	for i := range m.SCMs {
		s := &m.SCMs[i]
		s.PasteGlass = m.Paste[s.Kind.Phase]
		s.PasteCryst = m.Comp.PasteVolumeOf(s.MassFrac*(1-s.Amorphous), inert, cfg.Mix.WC)
		m.CementPaste[s.Kind.Phase] = 0
		m.CementPaste[kinetics.Inert] = math.Max(0, m.CementPaste[kinetics.Inert]-s.PasteCryst)
	}
	m.splitCoarse()
	return m, nil
}

// splitCoarse shares the paste between the lattice and the carried coarse
// grains: with T the powder's fraction coarser than the box's largest
// class and φ_s the solid fraction of the paste, the lattice is the paste
// less the coarse grains, of volume 1 − φ_s·T per volume of paste, so a
// phase's lattice fraction is φ_i (1 − T)/(1 − φ_s T) (water: φ_w/(1 − φ_s T))
// and its carried volume φ_i T/(1 − φ_s T) per lattice voxel. The lattice
// holds all the water of the mix at its w/c.
func (m *Mix) splitCoarse() {
	// Only the cement's own PSD has a carried tail: each SCM is packed
	// with its own classes, its sizes coarser than the box left out and
	// the rest scaled up to its full mass.
	t := m.Classes.Truncated
	cementSolid := 0.0
	for id, f := range m.CementPaste {
		if kinetics.IsAnhydrous(kinetics.ID(id)) {
			cementSolid += f
		}
	}
	den := 1 - cementSolid*t
	for id, f := range m.CementPaste {
		switch {
		case kinetics.ID(id) == kinetics.Water:
			m.Box[id] = f / den
		case kinetics.IsAnhydrous(kinetics.ID(id)) && f > 0:
			m.Box[id] = f * (1 - t) / den
			m.Carried[id] = f * t / den
		}
	}
	for i := range m.SCMs {
		s := &m.SCMs[i]
		s.BoxGlass, s.BoxCryst = s.PasteGlass/den, s.PasteCryst/den
	}
	m.CoarseBins = m.PSD.CoarseTail(m.Classes.VoxelUM, m.Classes.MaxDiameter)
}

// NewEngine prepares the engine for a packed lattice g of the mix and
// gives it the mix's carried coarse grains.
func (m *Mix) NewEngine(g *voxel.Grid, set voxel.EngineSettings) (*voxel.Engine, error) {
	e, err := voxel.NewEngine(g, set)
	if err != nil {
		return nil, err
	}
	var vox [kinetics.NumIDs]float64
	n := float64(g.Len())
	for id, f := range m.Carried {
		vox[id] = f * n
	}
	if err := e.Carry(voxel.CarriedPopulations(vox, clinkerGrains(m.Cfg.Pack)), m.CoarseBins); err != nil {
		return nil, err
	}
	return e, nil
}

// MixReport is the JSON form of a resolved mix (gelspace mix --json, and
// part of pack.json).
type MixReport struct {
	Source        string        `json:"source"`
	Cement        string        `json:"cement"`
	WC            float64       `json:"w_c"`
	DensityGPerCM float64       `json:"density_g_per_cm3"`
	SolidFraction float64       `json:"initial_solid_fraction"`
	Phases        []PhaseReport `json:"phases"`
	Bogue         *BogueReport  `json:"bogue"`
	PSD           PSDReport     `json:"psd"`
	Box           configs.Box   `json:"box"`
	// WB and SCMs describe a blend: the water-to-binder ratio (w_c then
	// holds the same value) and each SCM.
	WB   float64     `json:"w_b,omitempty"`
	SCMs []SCMReport `json:"scms,omitempty"`
}

// SCMReport is one SCM of a blend.
type SCMReport struct {
	Kind             string  `json:"kind"`
	Name             string  `json:"name"`
	MassPercent      float64 `json:"mass_percent_of_binder"`
	VolumePercent    float64 `json:"volume_percent_of_binder"`
	PastePercent     float64 `json:"paste_volume_percent"`
	DensityGPerCM3   float64 `json:"density_g_per_cm3"`
	AmorphousPercent float64 `json:"amorphous_percent"`
	Composition      string  `json:"reactive_part"`
	Representation   string  `json:"representation"`
	PSD              string  `json:"psd"`
	D10UM            float64 `json:"d10_um"`
	D50UM            float64 `json:"d50_um"`
	D90UM            float64 `json:"d90_um"`
	SurfaceM2PerKg   float64 `json:"specific_surface_psd_m2_per_kg"`
	FinerThanVoxel   float64 `json:"finer_than_voxel_fraction"`
	// CoarserThanBox is the SCM's share coarser than the box's largest
	// particle: unlike the cement's, it is not carried; the SCM's finer
	// sizes are scaled up to its full mass.
	CoarserThanBox float64 `json:"coarser_than_box_fraction"`
}

// PhaseReport is one phase of the powder.
type PhaseReport struct {
	Key            string  `json:"key"`
	Name           string  `json:"name"`
	Role           string  `json:"role"`
	DensityGPerCM3 float64 `json:"density_g_per_cm3"`
	MassPercent    float64 `json:"mass_percent"`
	VolumePercent  float64 `json:"volume_percent"`       // of the powder
	PastePercent   float64 `json:"paste_volume_percent"` // of the fresh paste
}

// BogueReport is the potential composition from the oxide analysis, mass %
// of the cement before the sulfate carrier and normalisation.
type BogueReport struct {
	C3S           float64 `json:"c3s"`
	C2S           float64 `json:"c2s"`
	C3A           float64 `json:"c3a"`
	C4AF          float64 `json:"c4af"`
	SolidSolution bool    `json:"ferrite_solid_solution"`
}

// PSDReport holds the PSD statistics.
type PSDReport struct {
	Description           string  `json:"description"`
	D10UM                 float64 `json:"d10_um"`
	D50UM                 float64 `json:"d50_um"`
	D90UM                 float64 `json:"d90_um"`
	SurfaceSpheresM2PerKg float64 `json:"specific_surface_psd_m2_per_kg"` // from the PSD (spheres), not Blaine
	SurfaceVoxelM2PerKg   float64 `json:"specific_surface_digitised_m2_per_kg"`
	FinerThanVoxel        float64 `json:"finer_than_voxel_fraction"`
	FineRepresentation    string  `json:"fine_representation"`
	MaxDiameterVoxels     int     `json:"max_diameter_voxels"`
	MaxDiameterUM         float64 `json:"max_diameter_um"`
	DigitisedMedianVoxels int     `json:"digitised_median_voxels"`
	// Carried is the powder's mass fraction coarser than the largest
	// packed particle, carried by the engine as shrinking spheres outside
	// the lattice (CarriedRepresentation).
	Carried               float64 `json:"carried_fraction"`
	CarriedBins           int     `json:"carried_size_bins"`
	CarriedMaxUM          float64 `json:"carried_max_diameter_um"`
	CarriedRepresentation string  `json:"carried_representation"`
	// RosinRammler is the law of a Rosin–Rammler PSD, or the law fitted
	// to a measured table with its quality.
	RosinRammler *RRReport `json:"rosin_rammler"`
	SurfaceNote  string    `json:"specific_surface_note"`
}

// RRReport is a Rosin–Rammler law and, for a fit to a table, how well it
// fits.
type RRReport struct {
	Source        string  `json:"source"` // "given" or "fitted to the table …"
	XUM           float64 `json:"x_um"`
	N             float64 `json:"n"`
	R2            float64 `json:"r2"`
	MaxDevPercent float64 `json:"max_dev_percent"`
	Rows          int     `json:"rows_used"`
}

// CarriedNote describes the carried coarse grains, for reports.
const CarriedNote = "grains coarser than the box's largest particle are not packed but carried by the engine as shrinking spheres per size bin (polymineral clinker with the phase shares, sulfates and fillers apart) that dissolve by the lattice's surface law and solution state and put their products into the box's pores; their volume is virtual (outside the lattice), their mass counts in every per-gram value and in alpha"

// SurfaceNote says what the PSD's specific surface is.
const SurfaceNote = "specific surface of the PSD taken as smooth spheres of the powder's density, 6000/(rho x) m2/kg integrated over the distribution; not a Blaine fineness (air permeability, EN 196-6, ASTM C204): the two differ by a factor that depends on the cement (grain shape, roughness, fines)"

// Report returns the JSON form of the mix.
func (m *Mix) Report() MixReport {
	rho := m.Comp.DensityGPerCM3()
	vol := m.Comp.VolumeFractions()
	rep := MixReport{Source: m.Cfg.Source, Cement: m.Cfg.Cement.Name, WC: m.Cfg.Mix.WC,
		DensityGPerCM: rho, SolidFraction: m.SolidFraction, Box: m.Cfg.Box}
	for _, id := range m.Comp.Present() {
		p := kinetics.Lookup(id)
		rep.Phases = append(rep.Phases, PhaseReport{Key: p.Key, Name: p.Name, Role: p.Role.String(),
			DensityGPerCM3: p.DensityGPerCM3, MassPercent: 100 * m.Comp.Mass(id),
			VolumePercent: 100 * vol[id], PastePercent: 100 * m.Paste[id]})
	}
	if m.Cfg.IsBlend() {
		rep.WB = m.Cfg.Mix.WB
		vs := m.Comp.SpecificVolumeCM3PerG()
		for _, sm := range m.SCMs {
			r := SCMReport{Kind: sm.Kind.Key, Name: sm.Kind.Name, MassPercent: 100 * sm.MassFrac,
				VolumePercent: 100 * sm.MassFrac / sm.DensityGPerCM3 / vs, PastePercent: 100 * (sm.PasteGlass + sm.PasteCryst),
				DensityGPerCM3: sm.DensityGPerCM3, AmorphousPercent: 100 * sm.Amorphous, Composition: kinetics.Lookup(sm.Kind.Phase).Name,
				Representation: "particles", PSD: sm.PSD.String(), D10UM: sm.PSD.QuantileUM(0.1), D50UM: sm.PSD.MedianUM(), D90UM: sm.PSD.QuantileUM(0.9),
				SurfaceM2PerKg: sm.PSD.SpecificSurfaceM2PerKg(sm.DensityGPerCM3), FinerThanVoxel: sm.PSD.Passing(m.Cfg.Box.VoxelUM),
				CoarserThanBox: sm.Classes.Truncated}
			if sm.SubVoxel {
				r.Representation = fmt.Sprintf("subvoxel: single-voxel agglomerates reacting by the powder's own surface, %.3g µm² per µm³", sm.SurfacePerUM)
			}
			rep.SCMs = append(rep.SCMs, r)
		}
	}
	if b := m.Bogue; b != nil {
		rep.Bogue = &BogueReport{C3S: b.C3S, C2S: b.C2S, C3A: b.C3A, C4AF: b.C4AF, SolidSolution: b.SS}
	}
	c := m.Classes
	rep.PSD = PSDReport{Description: m.PSD.String(), D10UM: m.PSD.QuantileUM(0.1), D50UM: m.PSD.MedianUM(),
		D90UM: m.PSD.QuantileUM(0.9), SurfaceSpheresM2PerKg: m.PSD.SpecificSurfaceM2PerKg(m.Cement.DensityGPerCM3()),
		SurfaceVoxelM2PerKg: c.SpecificSurfaceM2PerKg(m.Cement.DensityGPerCM3()), FinerThanVoxel: c.FinerThanVoxel,
		FineRepresentation: "merged into the 1-voxel class (single-voxel particles)",
		MaxDiameterVoxels:  c.MaxDiameter,
		MaxDiameterUM:      float64(c.MaxDiameter) * c.VoxelUM, DigitisedMedianVoxels: c.MedianDiameter(),
		Carried: c.Truncated, CarriedBins: len(m.CoarseBins), CarriedRepresentation: CarriedNote, SurfaceNote: SurfaceNote}
	if n := len(m.CoarseBins); n > 0 {
		rep.PSD.CarriedMaxUM = m.CoarseBins[n-1].DiameterUM
	}
	if fit, err := m.PSD.FitRosinRammler(); err == nil {
		src := "fitted to the table (least squares on the RRSB plot, DIN 66145)"
		if m.Cfg.PSD.RosinRammler != nil {
			src = "given"
		}
		rep.PSD.RosinRammler = &RRReport{Source: src, XUM: fit.XUM, N: fit.N, R2: fit.R2, MaxDevPercent: fit.MaxDevPercent, Rows: fit.Rows}
	}
	return rep
}

// WriteJSON writes v as indented JSON, the form of every JSON file and
// --json output of gelspace.
func WriteJSON(w io.Writer, v any) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(v)
}

// clip shortens a message about untrusted input to one escaped line of at
// most 200 characters.
func clip(msg string) string {
	if len(msg) > 200 {
		msg = msg[:200] + "…"
	}
	return strings.Map(func(r rune) rune {
		if r < 0x20 || r == 0x7f || r == utf8.RuneError {
			return '?'
		}
		return r
	}, msg)
}
