package kinetics

import (
	"fmt"
	"math"
	"sort"
)

// Thermal modes.
const (
	Isothermal = "isothermal"
	Schedule   = "schedule"
	Adiabatic  = "adiabatic"
)

// MaxTempC caps the adiabatic temperature: the kinetics are not meant for
// pore water near boiling, so an adiabatic paste stops warming at 95 °C.
const MaxTempC = 95.0

// SchedulePoint is one row of a temperature schedule.
type SchedulePoint struct {
	TimeH, TempC float64
}

// Thermal gives the paste temperature as a function of age and of the heat
// released so far.
type Thermal struct {
	Mode  string          // Isothermal (default when empty), Schedule or Adiabatic
	TempC float64         // isothermal temperature, or the start of an adiabatic run
	Steps []SchedulePoint // Schedule: linear between points, constant beyond the ends
	// HeatCapacityJPerGK is the heat capacity of what warms with the paste
	// per gram of cement (cement plus its water, and aggregate in a
	// concrete), for Adiabatic.
	HeatCapacityJPerGK float64
}

// Validate checks the thermal settings.
func (th *Thermal) Validate() error {
	switch th.Mode {
	case "", Isothermal, Adiabatic:
	case Schedule:
		if len(th.Steps) == 0 {
			return fmt.Errorf("curing.schedule: a schedule needs at least one row")
		}
		if !sort.SliceIsSorted(th.Steps, func(i, j int) bool { return th.Steps[i].TimeH < th.Steps[j].TimeH }) {
			return fmt.Errorf("curing.schedule: time_h must increase from row to row")
		}
		for _, s := range th.Steps {
			if s.TempC < -10 || s.TempC > 95 {
				return fmt.Errorf("curing.schedule: temperature_c = %g at %g h: must be in [-10, 95]", s.TempC, s.TimeH)
			}
		}
	default:
		return fmt.Errorf("curing.temperature_mode = %q: must be %q, %q or %q", th.Mode, Isothermal, Schedule, Adiabatic)
	}
	if th.TempC < -10 || th.TempC > 95 || math.IsNaN(th.TempC) {
		return fmt.Errorf("curing.temperature_c = %g: must be in [-10, 95]", th.TempC)
	}
	if th.Mode == Adiabatic && !(th.HeatCapacityJPerGK > 0) {
		return fmt.Errorf("curing.heat_capacity_j_per_k_per_g_cement = %g: must be > 0", th.HeatCapacityJPerGK)
	}
	return nil
}

// At returns the temperature in °C at age timeH with heatJPerG released.
func (th *Thermal) At(timeH, heatJPerG float64) float64 {
	switch th.Mode {
	case Schedule:
		s := th.Steps
		if timeH <= s[0].TimeH {
			return s[0].TempC
		}
		for i := 1; i < len(s); i++ {
			if timeH <= s[i].TimeH {
				f := (timeH - s[i-1].TimeH) / (s[i].TimeH - s[i-1].TimeH)
				return s[i-1].TempC + f*(s[i].TempC-s[i-1].TempC)
			}
		}
		return s[len(s)-1].TempC
	case Adiabatic:
		return min(th.TempC+heatJPerG/th.HeatCapacityJPerGK, MaxTempC)
	}
	return th.TempC
}
