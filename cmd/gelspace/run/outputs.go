package run

import (
	"bytes"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"sort"
	"strings"
	"sync"

	"github.com/BurntSushi/toml"

	"gelspace/configs"
	"gelspace/kinetics"
	"gelspace/render"
	"gelspace/voxel"
)

// Summary is summary.json.
type Summary struct {
	Version string `json:"version"`
	Caution string `json:"caution"`
	Config  string `json:"config"`
	Seed    int64  `json:"seed"`
	Mix     struct {
		WC             float64            `json:"w_c"`
		Cement         string             `json:"cement"`
		MassPercent    map[string]float64 `json:"mass_percent"`
		VolumePercent  map[string]float64 `json:"volume_percent"`
		DensityGPerCM3 float64            `json:"density_g_per_cm3"`
		PSD            string             `json:"psd"`
		PSDMedianUM    float64            `json:"psd_median_um"`
		// PSDStats are the PSD statistics of gelspace mix: d10, d50, d90,
		// the specific surface from the PSD (not Blaine), the
		// Rosin–Rammler law or its fit to a table, the carried fraction.
		PSDStats PSDReport `json:"psd_stats"`
	} `json:"mix"`
	// Carried is the powder carried outside the box as coarse grains.
	Carried CarriedSummary `json:"carried"`
	Box     struct {
		Voxels  int     `json:"voxels"`
		VoxelUM float64 `json:"voxel_um"`
	} `json:"box"`
	Curing struct {
		Mode            string  `json:"mode"`
		TemperatureMode string  `json:"temperature_mode"`
		TemperatureC    float64 `json:"temperature_c"`
		UntilH          float64 `json:"until_h"`
	} `json:"curing"`
	InitialSolidFractionTarget float64 `json:"initial_solid_fraction_target"`
	InitialSolidFraction       float64 `json:"initial_solid_fraction"`

	// Bases says what every volume fraction and per-gram value is of.
	Bases Bases `json:"bases"`

	// SetTimeH is the model's set point: the age at which the solids
	// first connect across the box in all three axes. It is not a Vicat
	// time (SetPointNote).
	SetTimeH              *float64 `json:"set_time_h"`
	SetTimeHMin           *string  `json:"set_time_h_min"` // the same, as "5 h 30 min"
	SetPointNote          string   `json:"set_point_note"`
	SetAlpha              *float64 `json:"set_alpha"`
	DepercolationTimeH    *float64 `json:"depercolation_time_h"`
	DepercolationPorosity *float64 `json:"depercolation_porosity"`
	DepercolationAlpha    *float64 `json:"depercolation_alpha"`

	AtAge []AgeValues `json:"at_age"`
	Final AgeValues   `json:"final"`

	// Blend describes the SCMs of a blended binder; absent for a plain
	// cement.
	Blend *BlendSummary `json:"blend,omitempty"`

	RelDiffusivity []DiffusivityAt `json:"rel_diffusivity"`

	// Calorimetry holds the heat-flow landmarks and the heat at 12 h to
	// 7 d.
	Calorimetry Calorimetry `json:"calorimetry"`
	// Chloride is the paste's effective chloride diffusion coefficient at
	// the last age D/D0 was computed; null without D/D0.
	Chloride *ChlorideEstimate `json:"chloride"`
	// EquivalentAge states how series.csv's equivalent_age_h is computed.
	EquivalentAge EquivalentAgeMethod `json:"equivalent_age"`

	Events     uint64  `json:"events"`
	WallS      float64 `json:"wall_s"`
	EventsPerS float64 `json:"events_per_s"`
}

// CarriedSummary is the share of the powder the engine carries as coarse
// grains outside the lattice, and how far it has reacted.
type CarriedSummary struct {
	MassFraction float64 `json:"mass_fraction"`
	// PasteVolumeFraction is their outlines' (virtual) share of the paste
	// volume.
	PasteVolumeFraction float64 `json:"paste_volume_fraction"`
	// VirtualPoreFraction is the water-filled pore space inside the
	// outlines, left by carried sulfate that dissolved without solid
	// product, as a fraction of the paste (counted in capillary_porosity).
	VirtualPoreFraction float64  `json:"virtual_pore_fraction"`
	AlphaFinal          *float64 `json:"alpha_final"` // null when nothing is carried
	Note                string   `json:"note"`
}

// AgeValues are the results at one age.
type AgeValues struct {
	Days              float64  `json:"days"`
	TimeH             float64  `json:"time_h"`
	Alpha             float64  `json:"alpha"`
	HeatJPerG         float64  `json:"heat_j_per_g"`
	CapillaryPorosity float64  `json:"capillary_porosity"`
	ChemShrinkage     float64  `json:"chem_shrinkage_ml_per_g"`
	NonEvaporable     float64  `json:"nonevaporable_water_g_per_g"`
	TemperatureC      float64  `json:"temperature_c"`
	SolidsConnected   *float64 `json:"solids_connected_fraction,omitempty"`
	PoresConnected    *float64 `json:"pores_connected_fraction,omitempty"`
	EquivalentAgeH    float64  `json:"equivalent_age_h"`
	GelSpaceRatio     float64  `json:"gel_space_ratio"`
	GelPorosity       float64  `json:"gel_porosity"`
	TotalPorosity     float64  `json:"total_porosity"`
	CHGPer100G        float64  `json:"ch_g_per_100g"`
	BoundWaterGPer100 float64  `json:"bound_water_g_per_100g"`
	AFtGPer100G       float64  `json:"aft_g_per_100g"`
	AFmGPer100G       float64  `json:"afm_g_per_100g"`
	CSHGPer100G       float64  `json:"csh_g_per_100g"`
}

// BlendSummary is the blend part of summary.json.
type BlendSummary struct {
	WB   float64         `json:"w_b"`
	SCMs []SCMAgeSummary `json:"scms"`
	// CHRanOutH is the age at which an SCM first found no CH to react
	// with (or, for slag, to be activated by); null when it never did.
	CHRanOutH *float64 `json:"ch_ran_out_h"`
	CHNote    string   `json:"ch_note"`
}

// SCMAgeSummary is one SCM's degree of reaction at the standard ages.
type SCMAgeSummary struct {
	Kind        string             `json:"kind"`
	MassPercent float64            `json:"mass_percent_of_binder"`
	Reaction    map[string]float64 `json:"degree_of_reaction"`       // by age label ("1 d", "28 d")
	Final       *float64           `json:"degree_of_reaction_final"` // null when the SCM is absent (0 %)
}

// CHNote explains ch_ran_out_h.
const CHNote = "the pozzolanic reactions take CH from the solution and slag needs it as activator; where none can be had they stop, and resume only as cement hydration makes more"

// blendSummary returns the blend part of the summary, or nil.
func (h *hydration) blendSummary(m *Mix) *BlendSummary {
	if !h.cfg.IsBlend() {
		return nil
	}
	b := &BlendSummary{WB: h.cfg.Mix.WB, CHNote: CHNote}
	if out, at := h.e.CHRanOut(); out {
		b.CHRanOutH = ptr(at)
	}
	last := h.st.Samples[len(h.st.Samples)-1]
	for _, sm := range m.SCMs {
		col := -1
		for k, id := range scmAlphaPhases {
			if id == sm.Kind.Phase {
				col = colAlphaSilicaFume + k
			}
		}
		a := SCMAgeSummary{Kind: sm.Kind.Key, MassPercent: 100 * sm.MassFrac, Reaction: map[string]float64{}}
		if !math.IsNaN(last[col]) {
			a.Final = ptr(last[col])
		}
		for _, age := range configs.StandardAgesH {
			for _, r := range h.st.Samples {
				if math.Abs(r[colTime]-age) < 1e-6 && !math.IsNaN(r[col]) {
					a.Reaction[ageLabel(age)] = r[col]
				}
			}
		}
		b.SCMs = append(b.SCMs, a)
	}
	return b
}

// Bases of summary.json and series.csv.
type Bases struct {
	Volumes string `json:"volumes"`
	PerGram string `json:"per_gram"`
}

// The bases, as written in summary.json and the column docs.
const (
	VolumeBasis  = "fraction of the paste volume (the box and the carried coarse grains' outlines: cement, SCMs, hydrates, water-filled and empty pores); connectivity, set point, depercolation and D/D0 are of the box, the matrix between the carried grains"
	PerGramBasis = "per gram (or per 100 g) of the whole powder as tested, packed and carried: the cement, or for a blend the binder (cement + every SCM)"
	// SetPointNote is written beside every set point.
	SetPointNote = "model set point: the solids first connect across the box in all three axes; not a Vicat time (ASTM C191, EN 196-3 measure that)"
	// PasteEstimateNote marks the chloride estimate.
	PasteEstimateNote = "paste estimate from the model's pore network (Nernst–Einstein D_eff = D0/F, D0(Cl⁻) = 2.03e-9 m²/s at 25 °C, CRC Handbook); a model estimate for screening, not a migration or diffusion test of concrete"
)

// ChlorideEstimate is summary.json's chloride.
type ChlorideEstimate struct {
	TimeH float64 `json:"time_h"`
	// FormationFactor is 1/(D/D0) of the mean over the axes; null when
	// no path conducts.
	FormationFactor *float64 `json:"formation_factor"`
	D0M2PerS        float64  `json:"d0_m2_per_s"`
	DEffM2PerS      float64  `json:"d_eff_m2_per_s"`
	Note            string   `json:"note"`
}

// EquivalentAgeMethod is summary.json's equivalent_age.
type EquivalentAgeMethod struct {
	ReferenceC         float64 `json:"reference_temperature_c"`
	ActivationKJPerMol float64 `json:"activation_energy_kj_per_mol"`
	Method             string  `json:"method"`
	FinalH             float64 `json:"final_equivalent_age_h"`
}

// DiffusivityAt is D/D0 per axis at one age, with the formation factor
// 1/(D/D0) (null where no path conducts) and the chloride estimate
// D0(Cl⁻)/F per axis, m²/s.
type DiffusivityAt struct {
	TimeH float64    `json:"time_h"`
	Rel   [3]float64 `json:"rel"`
	// RelCapillary is D/D0 of the capillary pores alone (C-S-H taken as
	// insulating): 0 once they have depercolated. Absent in runs written
	// before it existed.
	RelCapillary *[3]float64 `json:"rel_capillary,omitempty"`
	Formation    [3]*float64 `json:"formation_factor"`
	ChlorideDEff [3]float64  `json:"chloride_d_eff_m2_per_s"`
}

func ptr(v float64) *float64 { return &v }

func ageValues(r []float64) AgeValues {
	a := AgeValues{Days: r[colTime] / 24, TimeH: r[colTime], Alpha: r[colAlpha], HeatJPerG: r[colHeat], CapillaryPorosity: r[colCapPor],
		ChemShrinkage: r[colShrink], NonEvaporable: r[colNonEvap], TemperatureC: r[colTemp]}
	if !math.IsNaN(r[colSolidsFrac]) {
		a.SolidsConnected, a.PoresConnected = ptr(r[colSolidsFrac]), ptr(r[colPoresFrac])
	}
	a.EquivalentAgeH, a.GelSpaceRatio, a.GelPorosity, a.TotalPorosity = r[colEqAge], r[colGelSpace], r[colGelPor], r[colTotPor]
	a.CHGPer100G, a.BoundWaterGPer100, a.AFtGPer100G, a.AFmGPer100G, a.CSHGPer100G = r[colCH], r[colBoundW], r[colAFt], r[colAFm], r[colCSH]
	return a
}

func (h *hydration) summary(m *Mix) *Summary {
	cfg := h.cfg
	s := &Summary{Version: Version, Caution: render.Caution, Config: cfg.Source, Seed: cfg.Seed}
	s.Mix.WC = cfg.Mix.WC
	s.Mix.Cement = cfg.Cement.Name
	s.Mix.MassPercent, s.Mix.VolumePercent = map[string]float64{}, map[string]float64{}
	vol := m.Comp.VolumeFractions()
	for _, id := range m.Comp.Present() {
		k := kinetics.Lookup(id).Key
		s.Mix.MassPercent[k] = 100 * m.Comp.Mass(id)
		s.Mix.VolumePercent[k] = 100 * vol[id]
	}
	s.Mix.DensityGPerCM3 = m.Comp.DensityGPerCM3()
	s.Mix.PSD = m.PSD.String()
	s.Mix.PSDMedianUM = m.PSD.MedianUM()
	s.Mix.PSDStats = m.Report().PSD
	s.Carried = CarriedSummary{MassFraction: h.e.CarriedFraction(), PasteVolumeFraction: h.e.CarriedVoxels() / h.e.PasteVoxels(),
		VirtualPoreFraction: h.e.CarriedVoid() / h.e.PasteVoxels(), Note: CarriedNote}
	if a := h.e.CarriedAlpha(); !math.IsNaN(a) {
		s.Carried.AlphaFinal = &a
	}
	s.Box.Voxels, s.Box.VoxelUM = cfg.Box.Voxels, cfg.Box.VoxelUM
	s.Curing.Mode, s.Curing.TemperatureMode, s.Curing.TemperatureC, s.Curing.UntilH = cfg.Curing.Mode, h.set.Thermal.Mode, cfg.Curing.TemperatureC, cfg.Curing.UntilH
	s.InitialSolidFractionTarget = m.SolidFraction
	s.InitialSolidFraction = h.st.InitialSolid
	s.Bases = Bases{Volumes: VolumeBasis, PerGram: PerGramBasis}
	s.SetPointNote = SetPointNote
	if t := h.st.Set; t != nil {
		s.SetTimeH, s.SetAlpha = ptr(t.TimeH), ptr(t.Alpha)
		hm := render.HoursMinutes(t.TimeH)
		s.SetTimeHMin = &hm
	}
	if t := h.st.Deperc; t != nil {
		s.DepercolationTimeH, s.DepercolationPorosity, s.DepercolationAlpha = ptr(t.TimeH), ptr(t.Porosity), ptr(t.Alpha)
	}
	for _, age := range configs.StandardAgesH {
		for _, r := range h.st.Samples {
			if math.Abs(r[colTime]-age) < 1e-6 {
				s.AtAge = append(s.AtAge, ageValues(r))
			}
		}
	}
	s.Final = ageValues(h.st.Samples[len(h.st.Samples)-1])
	s.Blend = h.blendSummary(m)
	for k, t := range h.st.DiffAt {
		d := DiffusivityAt{TimeH: t, Rel: h.st.Diff[k]}
		if k < len(h.st.DiffCap) && !math.IsNaN(h.st.DiffCap[k][0]) {
			c := h.st.DiffCap[k]
			d.RelCapillary = &c
		}
		for a := range 3 {
			if d.Rel[a] > 0 {
				d.Formation[a] = ptr(1 / d.Rel[a]) // JSON has no infinity: null marks "no conducting path"
				d.ChlorideDEff[a] = ChlorideDEff(1 / d.Rel[a])
			}
		}
		s.RelDiffusivity = append(s.RelDiffusivity, d)
	}
	if n := len(h.st.DiffAt); n > 0 {
		rel := h.st.Diff[n-1]
		mean := (rel[0] + rel[1] + rel[2]) / 3
		c := &ChlorideEstimate{TimeH: h.st.DiffAt[n-1], D0M2PerS: ChlorideD0M2PerS, Note: PasteEstimateNote}
		if mean > 0 {
			c.FormationFactor, c.DEffM2PerS = ptr(1/mean), ChlorideDEff(1/mean)
		}
		s.Chloride = c
	}
	s.Calorimetry = calorimetry(h.st.Samples)
	s.EquivalentAge = EquivalentAgeMethod{ReferenceC: EquivalentAgeRefC, ActivationKJPerMol: cfg.Output.EquivalentAgeEaKJPerMol,
		Method: "t_e = Σ exp(−E/R (1/T − 1/T_r)) Δt over the sample intervals, T the interval's mean temperature, T_r = 293.15 K (the Arrhenius equivalent-age function of ASTM C1074)",
		FinalH: h.st.Samples[len(h.st.Samples)-1][colEqAge]}
	s.Events = h.st.Events
	s.WallS = h.st.WallS
	if s.WallS > 0 {
		s.EventsPerS = float64(s.Events) / s.WallS
	}
	return s
}

// writeRunOutputs writes every output of a finished run into dir, each file
// through a temporary name.
func writeRunOutputs(dir string, m *Mix, h *hydration, withImages bool) error {
	if len(h.st.Samples) == 0 {
		return errNoSamples
	}
	var outRows [][]float64
	for _, k := range h.st.Outputs {
		outRows = append(outRows, h.st.Samples[k])
	}
	g := h.e.Grid()
	sum := h.summary(m)
	files := []struct {
		name  string
		write func(io.Writer) error
	}{
		{"series.csv", func(w io.Writer) error { return writeSeriesCSV(w, outRows) }},
		{"samples.csv", func(w io.Writer) error { return writeSeriesCSV(w, h.st.Samples) }},
		{"summary.json", func(w io.Writer) error { return WriteJSON(w, sum) }},
		{"final.vti", func(w io.Writer) error { return voxel.WriteVTI(w, g) }},
		{"final.npy", func(w io.Writer) error { return voxel.WriteNPY(w, g) }},
		{"phases.csv", WritePhasesCSV},
	}
	for _, f := range files {
		if err := render.WriteFileAtomic(filepath.Join(dir, f.name), f.write); err != nil {
			return err
		}
	}
	if !withImages {
		return nil
	}
	return writeRunImages(dir, m, h, sum)
}

// writeRunImages writes slices/, plots/, timelapse.gif and report.html.
// The images are independent jobs run on up to h.workers goroutines; what
// the report embeds is kept in fixed slots, so the page does not depend on
// the order in which jobs finish.
func writeRunImages(dir string, m *Mix, h *hydration, sum *Summary) error {
	g := h.e.Grid()
	cfg := h.cfg
	sliceDir, plotDir := filepath.Join(dir, "slices"), filepath.Join(dir, "plots")
	for _, d := range []string{sliceDir, plotDir} {
		if err := os.MkdirAll(d, 0o755); err != nil {
			return err
		}
	}
	nOut := len(h.st.Outputs)
	final := h.st.Samples[len(h.st.Samples)-1][colTime]
	sliceImgs := make([]*render.Image, nOut) // report slot per output age (phase look)
	var finalImgs [2]*render.Image           // report: cut-away, grey mid slice
	var figs []render.Figure
	var frames []render.Frame
	var jobs []func() error
	for k, idx := range h.st.Outputs {
		k, age := k, h.st.Samples[idx][colTime]
		frames = append(frames, render.Frame{AgeH: age, Phase: h.st.Frames[k]})
		plane := render.Volume{Phase: h.st.Frames[k], NX: g.NX, NY: g.NY, NZ: 1, VoxelUM: g.VoxelUM}
		for _, look := range []render.Look{render.LookPhase, render.LookBSE} {
			look := look
			jobs = append(jobs, func() error {
				img, err := render.RenderSlice(plane, render.PlaneXY, 0, render.SliceOptions{Look: look, ShowAge: true, AgeH: age,
					Title: render.SliceTitle(render.PlaneXY, g.NZ/2, g.VoxelUM)})
				if err != nil {
					return err
				}
				var b bytes.Buffer
				if err := render.EncodePNG(&b, img); err != nil {
					return err
				}
				name := fmt.Sprintf("t%07.2fh_xy_z%03d_%s.png", age, g.NZ/2, look)
				if err := writeBytes(filepath.Join(sliceDir, name), b.Bytes()); err != nil {
					return err
				}
				if look == render.LookPhase && (k == 0 || k == nOut-1 || reportAge(age)) {
					sliceImgs[k] = &render.Image{Name: fmt.Sprintf("slice_%d", k), Caption: fmt.Sprintf("Mid xy slice at %s", ageLabel(age)), PNG: b.Bytes()}
				}
				return nil
			})
		}
	}
	jobs = append(jobs, func() error {
		return render.WriteFileAtomic(filepath.Join(dir, "timelapse.gif"), func(w io.Writer) error {
			return render.WriteTimeLapse(w, frames, g.NX, g.NY, 1, g.VoxelUM, render.PlaneXY, 0,
				render.SliceOptions{Look: render.LookPhase, Title: render.SliceTitle(render.PlaneXY, g.NZ/2, g.VoxelUM)})
		})
	})
	for slot, look := range []render.Look{render.LookPhase, render.LookBSE} {
		slot, look := slot, look
		jobs = append(jobs, func() error {
			written, err := render.RenderVolume(sliceDir, g.Phase, g.NX, g.NY, g.NZ, g.VoxelUM,
				render.Options{Looks: []render.Look{look}, ShowAge: true, AgeH: final, Prefix: "final_"})
			if err != nil {
				return err
			}
			want, caption := "final_cutaway_phase.png", "3D cut-away at "+ageLabel(final)
			if slot == 1 {
				want = render.SliceFileName("final_", render.PlaneXY, g.NZ/2, render.LookBSE)
				caption = "Backscattered-electron-like grey scale, mid xy slice at " + ageLabel(final)
			}
			for _, p := range written {
				if filepath.Base(p) == want {
					data, err := os.ReadFile(p)
					if err != nil {
						return err
					}
					finalImgs[slot] = &render.Image{Name: fmt.Sprintf("final_%d", slot), Caption: caption, PNG: data}
				}
			}
			return nil
		})
	}
	series := &render.Series{Columns: seriesColumns(), Rows: h.st.Samples}
	setH, depH := math.NaN(), math.NaN()
	if h.st.Set != nil {
		setH = h.st.Set.TimeH
	}
	if h.st.Deperc != nil {
		depH = h.st.Deperc.TimeH
	}
	jobs = append(jobs, func() error {
		var err error
		figs, err = render.RenderPlots(series, render.PlotOptions{WC: cfg.Mix.WC, SetTimeH: setH, DepercolationTimeH: depH, Calorimetry: calorimetryMarks(sum.Calorimetry), Powder: powderName(cfg)})
		if err != nil {
			return err
		}
		for _, f := range figs {
			if err := writeBytes(filepath.Join(plotDir, f.Name+".png"), f.PNG); err != nil {
				return err
			}
			if err := writeBytes(filepath.Join(plotDir, f.Name+".svg"), f.SVG); err != nil {
				return err
			}
		}
		return nil
	})
	if err := runJobs(h.workers, jobs); err != nil {
		return err
	}
	var reportSlices []render.Image
	for _, im := range append(sliceImgs, finalImgs[:]...) {
		if im != nil {
			reportSlices = append(reportSlices, *im)
		}
	}
	var plots []render.Image
	for _, f := range figs {
		plots = append(plots, render.Image{Name: f.Name, Caption: f.Title, PNG: f.PNG})
	}
	text, err := h.configText()
	if err != nil {
		return err
	}
	rep := &render.Report{
		Title:      "gelspace run: " + nonEmpty(cfg.Cement.Name, cfg.Source),
		Version:    Version,
		Mix:        mixRows(m, h),
		Results:    resultRows(series, sum),
		Plots:      plots,
		Slices:     reportSlices,
		ConfigText: text,
	}
	return render.WriteFileAtomic(filepath.Join(dir, "report.html"), func(w io.Writer) error { return render.WriteReport(w, rep) })
}

// writeBytes writes data to path through a temporary name.
func writeBytes(path string, data []byte) error {
	return render.WriteFileAtomic(path, func(w io.Writer) error { _, err := w.Write(data); return err })
}

// runJobs runs jobs on up to workers goroutines (0: all cores) and returns
// the error of the first job, in job order, that failed.
func runJobs(workers int, jobs []func() error) error {
	if workers <= 0 {
		workers = runtime.NumCPU()
	}
	errs := make([]error, len(jobs))
	next := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < min(workers, len(jobs)); w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for k := range next {
				errs[k] = jobs[k]()
			}
		}()
	}
	for k := range jobs {
		next <- k
	}
	close(next)
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}

// configText is the resolved config as TOML.
func (h *hydration) configText() (string, error) {
	if h.cfg.Raw() == nil {
		return "", nil
	}
	b, err := toml.Marshal(h.cfg.Raw().Tree)
	return string(b), err
}

func reportAge(h float64) bool {
	for _, d := range []float64{1, 7} {
		if math.Abs(h-24*d) < 1e-6 {
			return true
		}
	}
	return false
}

func ageLabel(h float64) string {
	if h >= 48 && math.Abs(h/24-math.Round(h/24)) < 1e-6 {
		return fmt.Sprintf("%g d", h/24)
	}
	return fmt.Sprintf("%g h", h)
}

func nonEmpty(a, b string) string {
	if a != "" {
		return a
	}
	return b
}

func mixRows(m *Mix, h *hydration) []render.Row {
	cfg := h.cfg
	rows := []render.Row{
		{Label: "Cement", Value: nonEmpty(cfg.Cement.Name, "(unnamed)")},
		{Label: "w/c", Value: fmt.Sprintf("%.3f", cfg.Mix.WC)},
	}
	if cfg.IsBlend() {
		rows[1] = render.Row{Label: "w/b (water to binder: cement + SCMs)", Value: fmt.Sprintf("%.3f", cfg.Mix.WB)}
		for _, sm := range m.SCMs {
			rep := "particles"
			if sm.SubVoxel {
				rep = fmt.Sprintf("sub-voxel powder reacting by its own surface (%.3g µm²/µm³)", sm.SurfacePerUM)
			}
			rows = append(rows, render.Row{Label: "SCM: " + sm.Kind.Name, Value: fmt.Sprintf("%.1f %% of the binder by mass, %.0f %% amorphous, ρ %.2f g/cm³; %s (median %.2f µm); %s",
				100*sm.MassFrac, 100*sm.Amorphous, sm.DensityGPerCM3, sm.PSD.String(), sm.PSD.MedianUM(), rep)})
		}
	}
	vol := m.Comp.VolumeFractions()
	ids := m.Comp.Present()
	sort.Slice(ids, func(i, j int) bool { return ids[i] < ids[j] })
	for _, id := range ids {
		rows = append(rows, render.Row{Label: kinetics.Lookup(id).Name, Value: fmt.Sprintf("%.1f %% by mass, %.1f %% by volume", 100*m.Comp.Mass(id), 100*vol[id])})
	}
	rows = append(rows,
		render.Row{Label: "Particle sizes", Value: fmt.Sprintf("%s (median %.1f µm)", m.PSD.String(), m.PSD.MedianUM())},
		render.Row{Label: "Initial solid fraction", Value: fmt.Sprintf("%.4f (target %.4f)", h.st.InitialSolid, m.SolidFraction)},
		render.Row{Label: "Box", Value: fmt.Sprintf("%d³ voxels of %g µm, seed %d", cfg.Box.Voxels, cfg.Box.VoxelUM, cfg.Seed)},
		render.Row{Label: "Curing", Value: fmt.Sprintf("%s, %s at %g °C, to %s", cfg.Curing.Mode, h.set.Thermal.Mode, cfg.Curing.TemperatureC, ageLabel(cfg.Curing.UntilH))},
	)
	return rows
}

func resultRows(s *render.Series, sum *Summary) []render.Row {
	setH, depH := math.NaN(), math.NaN()
	if sum.SetTimeH != nil {
		setH = *sum.SetTimeH
	}
	if sum.DepercolationTimeH != nil {
		depH = *sum.DepercolationTimeH
	}
	rows := render.KeyResults(s, setH, depH)
	if sum.SetAlpha != nil {
		rows = append(rows, render.Row{Label: "Degree of hydration at set", Value: fmt.Sprintf("%.3f", *sum.SetAlpha)})
	}
	if sum.DepercolationPorosity != nil {
		rows = append(rows, render.Row{Label: "Capillary porosity at depercolation", Value: fmt.Sprintf("%.3f", *sum.DepercolationPorosity)})
	}
	for _, d := range sum.RelDiffusivity {
		rows = append(rows, render.Row{Label: "D/D0 at " + ageLabel(d.TimeH), Value: fmt.Sprintf("x %.3g, y %.3g, z %.3g", d.Rel[0], d.Rel[1], d.Rel[2])})
		if c := d.RelCapillary; c != nil {
			rows = append(rows, render.Row{Label: "D/D0 of the capillary pores alone at " + ageLabel(d.TimeH) + " (C-S-H insulating)", Value: fmt.Sprintf("x %.3g, y %.3g, z %.3g", c[0], c[1], c[2])})
		}
	}
	if b := sum.Blend; b != nil {
		for _, sc := range b.SCMs {
			var parts []string
			for _, age := range configs.StandardAgesH {
				if v, ok := sc.Reaction[ageLabel(age)]; ok {
					parts = append(parts, fmt.Sprintf("%s %.2f", ageLabel(age), v))
				}
			}
			rows = append(rows, render.Row{Label: "Degree of reaction of the " + strings.ReplaceAll(sc.Kind, "_", " "), Value: strings.Join(parts, ", ")})
		}
		v := "CH lasted the whole run"
		if b.CHRanOutH != nil {
			v = fmt.Sprintf("CH ran out at %s: from then the SCM reactions were limited by CH (%s)", render.HoursMinutes(*b.CHRanOutH), b.CHNote)
		}
		rows = append(rows, render.Row{Label: "CH for the SCMs", Value: v})
	}
	rows = append(rows, calorimetryRows(sum)...)
	if c := sum.Chloride; c != nil {
		v := "no conducting path: 0"
		if c.FormationFactor != nil {
			v = fmt.Sprintf("%.3g m²/s (formation factor %.4g)", c.DEffM2PerS, *c.FormationFactor)
		}
		rows = append(rows, render.Row{Label: "Chloride D_eff of the paste at " + ageLabel(c.TimeH) + " (paste estimate)", Value: v + "; " + c.Note})
	}
	rows = append(rows, render.Row{Label: "Equivalent age at 20 °C at the end", Value: fmt.Sprintf("%.4g h (E = %g kJ/mol, ASTM C1074 Arrhenius function)", sum.EquivalentAge.FinalH, sum.EquivalentAge.ActivationKJPerMol)})
	f := sum.Final
	rows = append(rows,
		render.Row{Label: "Gel–space ratio at the end (Powers)", Value: fmt.Sprintf("%.3f", f.GelSpaceRatio)},
		render.Row{Label: "Porosity at the end, fraction of the paste", Value: fmt.Sprintf("capillary %.3f, gel %.3f, total %.3f", f.CapillaryPorosity, f.GelPorosity, f.TotalPorosity)},
		render.Row{Label: "Contents at the end, g per 100 g of cement (of binder for a blend)", Value: fmt.Sprintf("CH %.1f, bound water %.1f (compare TGA); AFt %.1f, AFm %.1f, C-S-H %.1f (compare XRD/Rietveld)", f.CHGPer100G, f.BoundWaterGPer100, f.AFtGPer100G, f.AFmGPer100G, f.CSHGPer100G)},
	)
	rows = append(rows, render.Row{Label: "Cost", Value: fmt.Sprintf("%d events in %.1f s", sum.Events, sum.WallS)})
	return rows
}

// powderName is what per-gram values are of: the cement, or the binder
// of a blend.
func powderName(cfg *configs.Config) string {
	if cfg.IsBlend() {
		return "binder"
	}
	return "cement"
}

func powderOf(sum *Summary) string {
	if sum.Blend != nil {
		return "binder"
	}
	return "cement"
}

// calorimetryMarks are the landmarks to mark on the calorimetry plot.
func calorimetryMarks(c Calorimetry) *render.CalorimetryMarks {
	v := func(p *float64) float64 {
		if p == nil {
			return math.NaN()
		}
		return *p
	}
	return &render.CalorimetryMarks{DormantMinH: v(c.DormantMinTimeH), MainPeakH: v(c.MainPeakTimeH), SulfateDepletionH: v(c.SulfateDepletionH)}
}

// calorimetryRows are the report's rows of the calorimetry landmarks.
func calorimetryRows(sum *Summary) []render.Row {
	c := sum.Calorimetry
	at := func(t, q *float64, unit string) string {
		if t == nil {
			return "not found"
		}
		return fmt.Sprintf("%s (%.3g %s)", render.HoursMinutes(*t), *q, unit)
	}
	rows := []render.Row{
		{Label: "Heat flow: dormant minimum", Value: at(c.DormantMinTimeH, c.DormantMinMWPerG, "mW/g")},
		{Label: "Heat flow: main peak", Value: at(c.MainPeakTimeH, c.MainPeakMWPerG, "mW/g")},
	}
	sd := "not found"
	if c.SulfateDepletionH != nil {
		sd = fmt.Sprintf("%s (%s)", render.HoursMinutes(*c.SulfateDepletionH), c.SulfateDepletionHow)
	}
	rows = append(rows, render.Row{Label: "Heat flow: sulfate depletion", Value: sd})
	var parts []string
	for _, h := range c.HeatAt {
		if h.HeatJPerG != nil {
			parts = append(parts, fmt.Sprintf("%s %.0f", ageLabel(h.TimeH), *h.HeatJPerG))
		}
	}
	if len(parts) > 0 {
		rows = append(rows, render.Row{Label: "Cumulative heat, J per g of " + powderOf(sum), Value: strings.Join(parts, ", ")})
	}
	return rows
}
