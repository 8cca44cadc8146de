package render

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
)

// HoursMinutes prints an age in whole hours and minutes ("5 h 30 min"),
// rounded to the minute.
func HoursMinutes(h float64) string {
	m := int(math.Round(h * 60))
	return fmt.Sprintf("%d h %02d min", m/60, m%60)
}

// SetPointLabel names the model's set point in the report and on plots:
// the solids first connect across the box, which is not a Vicat time.
const SetPointLabel = "Model set point (solids span the box; not a Vicat time)"

// CalorimetryMarks are the landmarks drawn on the calorimetry plot, h;
// NaN or ≤ 0 draws none.
type CalorimetryMarks struct {
	DormantMinH, MainPeakH, SulfateDepletionH float64
}

// CalorimetryMaxH is the end of the calorimetry plot's linear time axis,
// h: the span of an isothermal calorimetry report.
const CalorimetryMaxH = 72.0

// calorimetryFigure draws the heat flow against linear hours from 0 to
// CalorimetryMaxH (or the end of the series, if sooner), with the
// landmarks marked, the way isothermal calorimetry reports show it. It
// returns false when the series has no heat flow in that span.
func calorimetryFigure(t, flow []float64, marks *CalorimetryMarks) (Figure, bool, error) {
	opt := PlotOptions{LinearTime: true}
	p := newPlot("Heat flow, first 3 days (isothermal calorimetry view)", "heat flow (mW per g of "+opt.powder()+")", opt)
	var ts, qs []float64
	end := 0.0
	for i := range t {
		if !math.IsNaN(t[i]) {
			end = math.Max(end, t[i])
		}
		if t[i] <= CalorimetryMaxH+1e-9 || (i > 0 && t[i-1] < CalorimetryMaxH) {
			ts, qs = append(ts, t[i]), append(qs, flow[i]) // one point past the axis end, clipped
		}
	}
	if !addCurve(p, "heat flow (model)", ts, qs, curveStyle{colour: color.RGBA{0xb0, 0x30, 0x20, 0xff}, width: 2}, false, false) {
		return Figure{}, false, nil
	}
	p.X.Min, p.X.Max = 0, math.Min(CalorimetryMaxH, math.Max(end, 1))
	p.Y.Min = math.Min(0, p.Y.Min)
	p.X.Tick.Marker = hourTicks{}
	if marks != nil {
		top := p.Y.Max
		for _, m := range []struct {
			name string
			h    float64
			c    color.Color
		}{
			{"dormant minimum", marks.DormantMinH, color.RGBA{0x40, 0x70, 0x30, 0xff}},
			{"main peak", marks.MainPeakH, color.RGBA{0x20, 0x40, 0x90, 0xff}},
			{"sulfate depletion", marks.SulfateDepletionH, color.RGBA{0x70, 0x40, 0x90, 0xff}},
		} {
			if m.h > 0 && m.h <= p.X.Max {
				vline(p, fmt.Sprintf("%s %s", m.name, HoursMinutes(m.h)), m.h, p.Y.Min, top, m.c)
			}
		}
	}
	p.Legend.Left = false
	p.Legend.XOffs = vg.Points(-6)
	f, err := figure("calorimetry", p.Title.Text, plotWidthIn, plotHeightIn, p.Draw)
	return f, err == nil, err
}

// hourTicks marks a linear time axis every 6 h, labelled every 12 h.
type hourTicks struct{}

func (hourTicks) Ticks(min, max float64) []plot.Tick {
	var ts []plot.Tick
	for v := math.Ceil(min/6) * 6; v <= max+1e-9; v += 6 {
		tk := plot.Tick{Value: v}
		if math.Mod(v, 12) == 0 {
			tk.Label = fmt.Sprintf("%g", v)
		}
		ts = append(ts, tk)
	}
	return ts
}
