package kinetics

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Composition is the make-up of a cement powder (clinker phases, sulfate
// carrier and fillers) as mass fractions that sum to 1. The zero value is
// an empty powder.
type Composition struct {
	// MassFrac is indexed by phase id; only anhydrous solids are non-zero.
	MassFrac [NumIDs]float64
}

// Mass-percent sums accepted by NewComposition: outside [MinSumPercent,
// MaxSumPercent] the input is refused; inside, it is normalised to 100.
const (
	MinSumPercent = 95.0
	MaxSumPercent = 105.0
)

// NewComposition builds a composition from mass percents keyed by phase key
// ("c3s", "gypsum", ...). Every key must name an anhydrous phase (clinker,
// sulfate or filler), every value must lie in [0, 100], and the sum must lie
// in [MinSumPercent, MaxSumPercent]; the result is normalised to sum 1.
// The error names the bad key and the allowed range.
func NewComposition(massPercent map[string]float64) (*Composition, error) {
	keys := make([]string, 0, len(massPercent))
	for k := range massPercent {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	var c Composition
	sum := 0.0
	for _, k := range keys {
		v := massPercent[k]
		p := ByKey(k)
		if p == nil || (p.Role != RoleClinker && p.Role != RoleSulfate && p.Role != RoleFiller) {
			msg := fmt.Sprintf("unknown phase %q (allowed: %s)", k, strings.Join(Keys(RoleClinker, RoleSulfate, RoleFiller), ", "))
			if p != nil && p.Role == RoleSCM {
				msg += "; give an SCM as an [[scm]] entry"
			}
			return nil, fmt.Errorf("%s", msg)
		}
		if math.IsNaN(v) || v < 0 || v > 100 {
			return nil, fmt.Errorf("phase %q = %g mass %%: must be between 0 and 100", k, v)
		}
		c.MassFrac[p.ID] += v
		sum += v
	}
	if !(sum >= MinSumPercent && sum <= MaxSumPercent) {
		return nil, fmt.Errorf("phases sum to %.2f mass %%: must be between %g and %g (they are normalised to 100)", sum, MinSumPercent, MaxSumPercent)
	}
	for i := range c.MassFrac {
		c.MassFrac[i] /= sum
	}
	return &c, nil
}

// Mass returns the mass fraction of the phase with id.
func (c *Composition) Mass(id ID) float64 { return c.MassFrac[id] }

// SpecificVolumeCM3PerG returns the volume of 1 g of the powder, Σ mᵢ/ρᵢ,
// in cm³/g.
func (c *Composition) SpecificVolumeCM3PerG() float64 {
	v := 0.0
	for id, m := range c.MassFrac {
		if m == 0 {
			continue
		}
		v += m / Lookup(ID(id)).DensityGPerCM3
	}
	return v
}

// DensityGPerCM3 returns the density of the powder's solid (no voids),
// 1 / Σ mᵢ/ρᵢ, in g/cm³. It is 0 for an empty composition.
func (c *Composition) DensityGPerCM3() float64 {
	v := c.SpecificVolumeCM3PerG()
	if v == 0 {
		return 0
	}
	return 1 / v
}

// VolumeFractions returns each phase's share of the powder's solid volume,
// indexed by id, summing to 1.
func (c *Composition) VolumeFractions() [NumIDs]float64 {
	var out [NumIDs]float64
	v := c.SpecificVolumeCM3PerG()
	if v == 0 {
		return out
	}
	for id, m := range c.MassFrac {
		if m != 0 {
			out[id] = m / Lookup(ID(id)).DensityGPerCM3 / v
		}
	}
	return out
}

// FromVolumeFractions is the inverse of VolumeFractions: it returns the
// composition whose solid volume is shared as given (indexed by id; only
// anhydrous ids may be non-zero, the sum must be positive).
func FromVolumeFractions(vol [NumIDs]float64) (*Composition, error) {
	var c Composition
	sum := 0.0
	for id, f := range vol {
		if f == 0 {
			continue
		}
		if f < 0 || math.IsNaN(f) || !IsAnhydrous(ID(id)) || Lookup(ID(id)) == nil {
			return nil, fmt.Errorf("volume fraction %g for phase id %d: must be ≥ 0 and for an anhydrous phase", f, id)
		}
		c.MassFrac[id] = f * Lookup(ID(id)).DensityGPerCM3
		sum += c.MassFrac[id]
	}
	if sum == 0 {
		return nil, fmt.Errorf("volume fractions sum to 0: at least one phase must be present")
	}
	for i := range c.MassFrac {
		c.MassFrac[i] /= sum
	}
	return &c, nil
}

// SolidVolumeFraction returns the initial solid volume fraction of a fresh
// paste of this powder at water-to-cement mass ratio wc:
//
//	φ = (1/ρc) / (1/ρc + (w/c)/ρw)
//
// with ρc the powder density and ρw = WaterDensity (Powers' fresh-paste
// volumes; Powers & Brownyard 1947, from memory). It panics if wc is not positive.
func (c *Composition) SolidVolumeFraction(wc float64) float64 {
	if !(wc > 0) {
		panic(fmt.Sprintf("kinetics: SolidVolumeFraction: w/c %g must be > 0", wc))
	}
	vs := c.SpecificVolumeCM3PerG()
	return vs / (vs + wc/WaterDensity)
}

// PasteVolumeFractions returns each phase's share of the fresh paste volume
// (indexed by id, water at index Water), summing to 1, at w/c wc.
func (c *Composition) PasteVolumeFractions(wc float64) [NumIDs]float64 {
	phi := c.SolidVolumeFraction(wc)
	out := c.VolumeFractions()
	for i := range out {
		out[i] *= phi
	}
	out[Water] = 1 - phi
	return out
}

// Present returns the ids with non-zero mass, in id order.
func (c *Composition) Present() []ID {
	var ids []ID
	for id, m := range c.MassFrac {
		if m > 0 {
			ids = append(ids, ID(id))
		}
	}
	return ids
}
