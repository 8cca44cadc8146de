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
	"sync"

	"github.com/BurntSushi/toml"

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
	} `json:"mix"`
	Box struct {
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

	SetTimeH              *float64 `json:"set_time_h"`
	SetAlpha              *float64 `json:"set_alpha"`
	DepercolationTimeH    *float64 `json:"depercolation_time_h"`
	DepercolationPorosity *float64 `json:"depercolation_porosity"`
	DepercolationAlpha    *float64 `json:"depercolation_alpha"`

	AtAge []AgeValues `json:"at_age"`
	Final AgeValues   `json:"final"`

	RelDiffusivity []DiffusivityAt `json:"rel_diffusivity"`

	Events     uint64  `json:"events"`
	WallS      float64 `json:"wall_s"`
	EventsPerS float64 `json:"events_per_s"`
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
}

// DiffusivityAt is D/D0 per axis at one age.
type DiffusivityAt struct {
	TimeH     float64    `json:"time_h"`
	Rel       [3]float64 `json:"rel"`
	Formation [3]float64 `json:"formation_factor"`
}

func ptr(v float64) *float64 { return &v }

func ageValues(r []float64) AgeValues {
	a := AgeValues{Days: r[colTime] / 24, TimeH: r[colTime], Alpha: r[colAlpha], HeatJPerG: r[colHeat], CapillaryPorosity: r[colCapPor],
		ChemShrinkage: r[colShrink], NonEvaporable: r[colNonEvap], TemperatureC: r[colTemp]}
	if !math.IsNaN(r[colSolidsFrac]) {
		a.SolidsConnected, a.PoresConnected = ptr(r[colSolidsFrac]), ptr(r[colPoresFrac])
	}
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
	s.Box.Voxels, s.Box.VoxelUM = cfg.Box.Voxels, cfg.Box.VoxelUM
	s.Curing.Mode, s.Curing.TemperatureMode, s.Curing.TemperatureC, s.Curing.UntilH = cfg.Curing.Mode, h.set.Thermal.Mode, cfg.Curing.TemperatureC, cfg.Curing.UntilH
	s.InitialSolidFractionTarget = m.SolidFraction
	s.InitialSolidFraction = h.st.InitialSolid
	if t := h.st.Set; t != nil {
		s.SetTimeH, s.SetAlpha = ptr(t.TimeH), ptr(t.Alpha)
	}
	if t := h.st.Deperc; t != nil {
		s.DepercolationTimeH, s.DepercolationPorosity, s.DepercolationAlpha = ptr(t.TimeH), ptr(t.Porosity), ptr(t.Alpha)
	}
	for _, d := range []float64{1, 3, 7, 28} {
		for _, r := range h.st.Samples {
			if math.Abs(r[colTime]-24*d) < 1e-6 {
				s.AtAge = append(s.AtAge, ageValues(r))
			}
		}
	}
	s.Final = ageValues(h.st.Samples[len(h.st.Samples)-1])
	for k, t := range h.st.DiffAt {
		d := DiffusivityAt{TimeH: t, Rel: h.st.Diff[k]}
		for a := range 3 {
			d.Formation[a] = 1 / d.Rel[a]
			if d.Rel[a] == 0 {
				d.Formation[a] = -1 // JSON has no infinity: -1 marks "no conducting path"
			}
		}
		s.RelDiffusivity = append(s.RelDiffusivity, d)
	}
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
		figs, err = render.RenderPlots(series, render.PlotOptions{WC: cfg.Mix.WC, SetTimeH: setH, DepercolationTimeH: depH})
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
	}
	rows = append(rows, render.Row{Label: "Cost", Value: fmt.Sprintf("%d events in %.1f s", sum.Events, sum.WallS)})
	return rows
}
