package kinetics

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Oxides is a cement's oxide analysis in mass percent, as printed on a mill
// certificate. FreeCaO (free lime) is part of CaO and is subtracted from it
// before Bogue. MgO is carried for reports only: Bogue ignores it.
type Oxides struct {
	CaO, SiO2, Al2O3, Fe2O3, SO3, FreeCaO, MgO float64
}

// OxideKeys lists the config keys of an oxide analysis, in the order of
// the Oxides fields; the first five are required.
var OxideKeys = []string{"cao", "sio2", "al2o3", "fe2o3", "so3", "free_cao", "mgo"}

// OxidesFromMap reads an oxide analysis keyed by OxideKeys. Every value
// must lie in [0, 100]; cao, sio2, al2o3, fe2o3 and so3 are required; the
// sum (free lime excluded, it is part of CaO) must not exceed 101.
func OxidesFromMap(m map[string]float64) (Oxides, error) {
	var o Oxides
	ptr := []*float64{&o.CaO, &o.SiO2, &o.Al2O3, &o.Fe2O3, &o.SO3, &o.FreeCaO, &o.MgO}
	known := map[string]*float64{}
	for i, k := range OxideKeys {
		known[k] = ptr[i]
	}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		p, ok := known[k]
		if !ok {
			return o, fmt.Errorf("unknown oxide %q (allowed: %s)", k, strings.Join(OxideKeys, ", "))
		}
		v := m[k]
		if math.IsNaN(v) || v < 0 || v > 100 {
			return o, fmt.Errorf("oxide %q = %g mass %%: must be between 0 and 100", k, v)
		}
		*p = v
	}
	for _, k := range OxideKeys[:5] {
		if _, ok := m[k]; !ok {
			return o, fmt.Errorf("oxide %q missing: cao, sio2, al2o3, fe2o3 and so3 are required", k)
		}
	}
	if o.FreeCaO > o.CaO {
		return o, fmt.Errorf("oxide \"free_cao\" = %g exceeds cao = %g: free lime is part of the total CaO", o.FreeCaO, o.CaO)
	}
	if s := o.CaO + o.SiO2 + o.Al2O3 + o.Fe2O3 + o.SO3 + o.MgO; s > 101 {
		return o, fmt.Errorf("oxides sum to %.2f mass %%: must not exceed 101", s)
	}
	return o, nil
}

// BoguePhases holds the potential phase composition of a clinker in mass
// percent of the cement, from Bogue's equations.
type BoguePhases struct {
	C3S, C2S, C3A, C4AF float64
	// SS is the ferrite solid solution ss(C4AF + C2F) of the A/F < 0.64
	// branch, reported in C4AF; zero on the other branch.
	SS bool
}

// BogueAFLimit is the alumina-to-iron-oxide mass ratio that selects the
// branch of the Bogue equations.
const BogueAFLimit = 0.64

// Bogue computes the potential phase composition from an oxide analysis by
// the equations of ASTM C150, Annex A1, with C the total
// CaO less free lime:
//
//	A/F ≥ 0.64:
//	  C3S  = 4.071C − 7.600S − 6.718A − 1.430F − 2.852SO3
//	  C3A  = 2.650A − 1.692F
//	  C4AF = 3.043F
//	A/F < 0.64 (ferrite solid solution, no C3A):
//	  ss(C4AF + C2F) = 2.100A + 1.702F
//	  C3S  = 4.071C − 7.600S − 4.479A − 2.859F − 2.852SO3
//	  C3A  = 0
//	both:
//	  C2S  = 2.867S − 0.7544 C3S
//
// A negative phase means the analysis is not that of a Portland clinker
// (or is mistyped); Bogue returns an error naming the phase.
func Bogue(o Oxides) (BoguePhases, error) {
	C := o.CaO - o.FreeCaO
	S, A, F := o.SiO2, o.Al2O3, o.Fe2O3
	var b BoguePhases
	if F == 0 || A/F >= BogueAFLimit {
		b.C3S = 4.071*C - 7.600*S - 6.718*A - 1.430*F - 2.852*o.SO3
		b.C3A = 2.650*A - 1.692*F
		b.C4AF = 3.043 * F
	} else {
		b.SS = true
		b.C3S = 4.071*C - 7.600*S - 4.479*A - 2.859*F - 2.852*o.SO3
		b.C4AF = 2.100*A + 1.702*F
	}
	b.C2S = 2.867*S - 0.7544*b.C3S
	for _, p := range []struct {
		name string
		v    float64
	}{{"C3S", b.C3S}, {"C2S", b.C2S}, {"C3A", b.C3A}, {"C4AF", b.C4AF}} {
		if p.v < 0 {
			hint := "check cao and sio2"
			if p.name == "C3S" {
				hint = "too little CaO for the silica, alumina and iron: check cao, sio2, al2o3, fe2o3"
			} else if p.name == "C2S" {
				hint = "too much CaO for the silica (C3S exceeds what SiO2 allows): check cao and sio2"
			}
			return b, fmt.Errorf("Bogue gives %s = %.1f mass %% (negative): not a Portland clinker analysis; %s", p.name, p.v, hint)
		}
	}
	return b, nil
}

// SulfateSplit says how the SO3 of an oxide analysis is carried: the share
// of SO3 (by mass of SO3) in each sulfate phase. The zero value means all
// SO3 as gypsum, the default assumption: a mill certificate gives SO3 but
// not the carrier, and gypsum is the usual set regulator interground with
// clinker. Plants that know their carrier split set it.
type SulfateSplit struct {
	Gypsum, Hemihydrate, Anhydrite float64
}

// SulfateKeys lists the phase keys a SulfateSplit may name.
var SulfateKeys = []string{"gypsum", "hemihydrate", "anhydrite"}

// SulfateSplitFromMap reads a split keyed by SulfateKeys; values in [0, 1]
// summing to 1 within 0.01 (they are normalised).
func SulfateSplitFromMap(m map[string]float64) (SulfateSplit, error) {
	var s SulfateSplit
	ptr := map[string]*float64{"gypsum": &s.Gypsum, "hemihydrate": &s.Hemihydrate, "anhydrite": &s.Anhydrite}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	sum := 0.0
	for _, k := range keys {
		p, ok := ptr[k]
		if !ok {
			return s, fmt.Errorf("unknown sulfate carrier %q (allowed: %s)", k, strings.Join(SulfateKeys, ", "))
		}
		v := m[k]
		if math.IsNaN(v) || v < 0 || v > 1 {
			return s, fmt.Errorf("sulfate share %q = %g: must be between 0 and 1", k, v)
		}
		*p = v
		sum += v
	}
	if len(m) == 0 {
		return SulfateSplit{}, nil
	}
	if math.Abs(sum-1) > 0.01 {
		return s, fmt.Errorf("sulfate shares sum to %g: must sum to 1 (±0.01)", sum)
	}
	s.Gypsum /= sum
	s.Hemihydrate /= sum
	s.Anhydrite /= sum
	return s, nil
}

// so3MolarMass is the molar mass of SO3 in g/mol.
const so3MolarMass = 80.06

// CarrierMassPercent converts SO3 mass percent to the mass percent of each
// sulfate phase under the split: m_phase = SO3 · share · M_phase / M_SO3
// (one S per formula unit of each carrier). Indexed by phase id.
func (s SulfateSplit) CarrierMassPercent(so3 float64) map[ID]float64 {
	if s == (SulfateSplit{}) {
		s.Gypsum = 1
	}
	out := map[ID]float64{}
	for _, c := range []struct {
		id    ID
		share float64
	}{{Gypsum, s.Gypsum}, {Hemihydrate, s.Hemihydrate}, {Anhydrite, s.Anhydrite}} {
		if c.share > 0 {
			out[c.id] = so3 * c.share * Lookup(c.id).MolarMassGPerMol / so3MolarMass
		}
	}
	return out
}

// CompositionFromOxides runs Bogue on the analysis, adds the sulfate
// carrier from SO3 under split, and normalises to the phases gelspace
// represents: the minor oxides, free lime and loss on ignition are left
// out of the powder (their mass is spread pro rata). It returns the
// composition and the Bogue result.
func CompositionFromOxides(o Oxides, split SulfateSplit) (*Composition, BoguePhases, error) {
	b, err := Bogue(o)
	if err != nil {
		return nil, b, err
	}
	var c Composition
	c.MassFrac[C3S] = b.C3S
	c.MassFrac[C2S] = b.C2S
	c.MassFrac[C3A] = b.C3A
	c.MassFrac[C4AF] = b.C4AF
	for id, m := range split.CarrierMassPercent(o.SO3) {
		c.MassFrac[id] += m
	}
	sum := 0.0
	for _, m := range c.MassFrac {
		sum += m
	}
	if sum <= 0 {
		return nil, b, fmt.Errorf("Bogue gives no phases from the analysis")
	}
	for i := range c.MassFrac {
		c.MassFrac[i] /= sum
	}
	return &c, b, nil
}
