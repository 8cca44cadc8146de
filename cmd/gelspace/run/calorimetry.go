package run

import "math"

// Calorimetry landmarks of a heat-flow curve, as an isothermal
// calorimetry report (ASTM C1702 measures the curve) reads them. The rules
// are gelspace's own and work on the curve smoothed by a centred moving
// average over ±SmoothHalfWidthH:
//
//   - main peak: the point that stands highest above the lowest flow
//     before it, searched from LandmarkStartH on (the heat of wetting in
//     the first minutes is not a peak). A maximum at the end of the run is
//     no peak: the flow may still be rising.
//   - dormant minimum: the lowest flow between LandmarkStartH and the
//     main peak.
//   - sulfate depletion: on the curve smoothed over ±SulfateSmoothH,
//     within SulfateWindowH after the main peak and while the flow stays
//     above the dormant minimum by SulfateFloor of the main peak's rise
//     (a tail of noise is no shoulder), the first second peak (a local
//     maximum standing at least SecondPeakRise of the main peak's rise
//     above the lowest flow since the main peak) or, failing that, the first shoulder: a local
//     maximum of the slope (over ±SulfateSmoothH) where the decline has
//     eased by at least ShoulderEase of the steepest decline since the
//     main peak, and steepens again by as much within ShoulderWindowH.
//     None found: null.
const (
	SmoothHalfWidthH = 0.5
	SulfateSmoothH   = 1.0
	LandmarkStartH   = 0.5
	SulfateWindowH   = 24.0
	SulfateFloor     = 0.2
	SecondPeakRise   = 0.05
	ShoulderWindowH  = 12.0
	ShoulderEase     = 0.25
)

// HeatAges are the ages of calorimetry.heat_at, h.
var HeatAges = []float64{12, 24, 48, 72, 168}

// Calorimetry is summary.json's calorimetry: the landmarks of the heat
// flow and the cumulative heat at HeatAges. Heat flows are mW and heats J
// per gram of cement; null means not found or not reached.
type Calorimetry struct {
	DormantMinTimeH     *float64 `json:"dormant_min_time_h"`
	DormantMinMWPerG    *float64 `json:"dormant_min_heat_flow_mw_per_g"`
	MainPeakTimeH       *float64 `json:"main_peak_time_h"`
	MainPeakMWPerG      *float64 `json:"main_peak_heat_flow_mw_per_g"`
	SulfateDepletionH   *float64 `json:"sulfate_depletion_time_h"`
	SulfateDepletionHow string   `json:"sulfate_depletion_kind,omitempty"` // "second peak" or "shoulder"
	HeatAt              []HeatAt `json:"heat_at"`
	Method              string   `json:"method"`
}

// HeatAt is the cumulative heat at one age.
type HeatAt struct {
	TimeH     float64  `json:"time_h"`
	HeatJPerG *float64 `json:"heat_j_per_g"`
}

// calorimetryMethod is the rule text written beside the landmarks.
const calorimetryMethod = "heat flow at the middle of each sample interval, smoothed by a centred moving average over ±0.5 h; main peak: the highest rise above the lowest earlier flow from 0.5 h on (not at the end of the run); dormant minimum: the lowest flow between 0.5 h and the main peak; sulfate depletion (curve smoothed over ±1 h, within 24 h after the main peak while the flow stays 20 % of the peak's rise above the dormant minimum): the first second peak rising ≥ 5 % of the main peak's rise, else the first shoulder, a local maximum of the slope where the decline eases by ≥ 25 % of its steepest and steepens again by as much within 12 h; model estimates, not a measured curve"

// Landmarks holds the landmark indices found on a curve (-1: none) and
// the smoothed flow.
type Landmarks struct {
	Dormant, Peak, Sulfate int
	Shoulder               bool // Sulfate is a shoulder, not a second peak
	Smooth                 []float64
}

// FindLandmarks finds the landmarks of the heat-flow curve flow(t) (t
// increasing, h; NaN flows are left out of the smoothing) by the rules
// above.
func FindLandmarks(t, flow []float64) Landmarks {
	if len(t) != len(flow) {
		panic("run: FindLandmarks: t and flow differ in length")
	}
	n := len(t)
	lm := Landmarks{Dormant: -1, Peak: -1, Sulfate: -1, Smooth: smooth(t, flow, SmoothHalfWidthH)}
	q := lm.Smooth
	i0 := 0
	for i0 < n && (t[i0] < LandmarkStartH || math.IsNaN(q[i0])) {
		i0++
	}
	if i0 >= n {
		return lm
	}
	// Main peak: the largest rise above the running minimum.
	runMin, runArg, best, bestRise, bestMin := q[i0], i0, -1, 0.0, -1
	for i := i0; i < n; i++ {
		if math.IsNaN(q[i]) {
			continue
		}
		if q[i] < runMin {
			runMin, runArg = q[i], i
		}
		if rise := q[i] - runMin; rise > bestRise {
			best, bestRise, bestMin = i, rise, runArg
		}
	}
	if best < 0 {
		return lm // flow never rises
	}
	lm.Dormant = bestMin
	if best == n-1 {
		return lm // still rising at the end
	}
	lm.Peak = best
	// Sulfate depletion after the main peak, on the curve smoothed over
	// the wider SulfateSmoothH, with slopes over ±SulfateSmoothH.
	w := smooth(t, flow, SulfateSmoothH)
	end := best
	for end+1 < n && t[end+1] <= t[best]+SulfateWindowH && w[end+1] >= q[bestMin]+SulfateFloor*bestRise {
		end++
	}
	lowest := w[best]
	for k := best + 1; k < end; k++ {
		lowest = math.Min(lowest, w[k])
		if w[k] >= w[k-1] && w[k] >= w[k+1] && w[k]-lowest >= SecondPeakRise*bestRise {
			lm.Sulfate = k
			return lm
		}
	}
	slope := make([]float64, n)
	for k := range slope {
		slope[k] = math.NaN()
		a, b := k, k
		for a > 0 && t[a] > t[k]-SulfateSmoothH {
			a--
		}
		for b < n-1 && t[b] < t[k]+SulfateSmoothH {
			b++
		}
		if b > a {
			slope[k] = (w[b] - w[a]) / (t[b] - t[a])
		}
	}
	steepest := 0.0
	for k := best + 1; k+1 < end; k++ {
		s := slope[k]
		if steepest < 0 && s < 0 && s >= slope[k-1] && s >= slope[k+1] && s-steepest >= -ShoulderEase*steepest {
			for j := k + 1; j < end && t[j] <= t[k]+ShoulderWindowH; j++ {
				if slope[j] <= s+ShoulderEase*steepest {
					lm.Sulfate, lm.Shoulder = k, true
					return lm
				}
			}
		}
		steepest = math.Min(steepest, s)
	}
	return lm
}

// smooth is the centred moving average of q(t) over ±hw (NaN values left
// out; NaN where none is in the window).
func smooth(t, q []float64, hw float64) []float64 {
	n := len(t)
	out := make([]float64, n)
	lo := 0
	for i := range t {
		for t[lo] < t[i]-hw-1e-9 {
			lo++
		}
		sum, k := 0.0, 0
		for j := lo; j < n && t[j] <= t[i]+hw+1e-9; j++ {
			if !math.IsNaN(q[j]) {
				sum += q[j]
				k++
			}
		}
		out[i] = math.NaN()
		if k > 0 {
			out[i] = sum / float64(k)
		}
	}
	return out
}

// calorimetry returns the landmarks of the samples' heat-flow curve and
// the heat at HeatAges. Each heat flow is the mean over its sample
// interval and is placed at the interval's middle.
func calorimetry(samples [][]float64) Calorimetry {
	c := Calorimetry{Method: calorimetryMethod}
	var t, q []float64
	prevT := 0.0
	for _, r := range samples {
		t = append(t, 0.5*(prevT+r[colTime]))
		q = append(q, r[colFlow])
		prevT = r[colTime]
	}
	lm := FindLandmarks(t, q)
	if lm.Dormant >= 0 {
		c.DormantMinTimeH, c.DormantMinMWPerG = ptr(t[lm.Dormant]), ptr(lm.Smooth[lm.Dormant])
	}
	if lm.Peak >= 0 {
		c.MainPeakTimeH, c.MainPeakMWPerG = ptr(t[lm.Peak]), ptr(lm.Smooth[lm.Peak])
	}
	if lm.Sulfate >= 0 {
		c.SulfateDepletionH = ptr(t[lm.Sulfate])
		c.SulfateDepletionHow = "second peak"
		if lm.Shoulder {
			c.SulfateDepletionHow = "shoulder"
		}
	}
	for _, age := range HeatAges {
		c.HeatAt = append(c.HeatAt, HeatAt{TimeH: age, HeatJPerG: heatAt(samples, age)})
	}
	return c
}

// heatAt interpolates the cumulative heat linearly at age (from 0 J/g at
// age 0); nil past the last sample.
func heatAt(samples [][]float64, age float64) *float64 {
	pt, pq := 0.0, 0.0
	for _, r := range samples {
		if r[colTime] >= age-1e-9 {
			f := (age - pt) / (r[colTime] - pt)
			return ptr(pq + f*(r[colHeat]-pq))
		}
		pt, pq = r[colTime], r[colHeat]
	}
	return nil
}
