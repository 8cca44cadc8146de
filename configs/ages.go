package configs

import "math"

// StandardAgesH are the ages, h, at which a cement lab tests (1, 2, 3, 7,
// 28 and 90 days): summary.json's at_age rows and the report's key
// results are taken there when a run reaches them.
var StandardAgesH = []float64{24, 48, 72, 168, 672, 2160}

// dropPastEnd removes from output.times_h and output.diffusivity_times_h
// the ages past curing.until_h, so that a shorter run (curing.until_h or
// --until) keeps the output ages it reaches. The ages dropped from a list
// the config gave are recorded in DroppedAgesH for the command to list;
// ages of the built-in default list are dropped silently. An until_h that
// is not > 0 is left for Validate to refuse.
func (c *Config) dropPastEnd(r *Raw) {
	end := c.Curing.UntilH
	if !(end > 0) || math.IsNaN(end) {
		return
	}
	given := func(key string) bool {
		out, ok := r.Tree["output"].(map[string]any)
		if !ok {
			return false
		}
		_, ok = out[key]
		return ok
	}
	keep := func(ts []float64, report bool) []float64 {
		out := ts[:0:0]
		for _, t := range ts {
			if t > end {
				if report {
					c.DroppedAgesH = append(c.DroppedAgesH, t)
				}
				continue
			}
			out = append(out, t)
		}
		return out
	}
	c.Output.TimesH = keep(c.Output.TimesH, given("times_h"))
	dropped := len(c.DroppedAgesH)
	c.Output.DiffusivityTimesH = keep(c.Output.DiffusivityTimesH, given("diffusivity_times_h"))
	// An age in both lists is listed once.
	seen := map[float64]bool{}
	for _, t := range c.DroppedAgesH[:dropped] {
		seen[t] = true
	}
	out := c.DroppedAgesH[:dropped]
	for _, t := range c.DroppedAgesH[dropped:] {
		if !seen[t] {
			out = append(out, t)
		}
	}
	c.DroppedAgesH = out
}
