package configs

import (
	"bytes"
	"fmt"
	"math"
	"path/filepath"

	"gelspace/kinetics"
	"gelspace/voxel"
)

// SCM is one supplementary cementitious material of a blended binder
// ([[scm]]). Only Kind and MassPercent are required; the rest default to
// the typical powder of the kind (kinetics.SCMKinds).
type SCM struct {
	// Kind is silica_fume, fly_ash, slag or metakaolin.
	Kind string `toml:"kind"`
	// MassPercent is the SCM's share of the binder (cement + every SCM),
	// 0–80 %.
	MassPercent float64 `toml:"mass_percent"`
	// AmorphousPercent is the reactive (glassy or amorphous) share of the
	// powder, mass %; the rest is inert crystalline matter in the same
	// particles.
	AmorphousPercent *float64 `toml:"amorphous_percent"`
	// PSD is the powder's own size distribution (rosin_rammler or table).
	PSD *PSD `toml:"psd"`
	// Representation is "particles" (digitised particles, like cement
	// grains) or "subvoxel" (powder finer than a voxel carried as
	// single-voxel agglomerates that react by the powder's own specific
	// surface). Default: subvoxel for silica fume, particles otherwise.
	Representation string `toml:"representation"`
}

// SCM representations, the values of scm.representation.
const (
	RepParticles = "particles"
	RepSubVoxel  = "subvoxel"
)

// MaxFinerThanVoxel is the largest share of an SCM powder, carried as
// particles, that may be finer than one voxel edge.
const MaxFinerThanVoxel = 0.5

// Amorphous returns the SCM's amorphous share, 0–1.
func (s SCM) Amorphous() float64 {
	if s.AmorphousPercent != nil {
		return *s.AmorphousPercent / 100
	}
	return kinetics.SCMKindByKey(s.Kind).AmorphousPercent / 100
}

// SubVoxel reports whether the SCM is carried as sub-voxel powder.
func (s SCM) SubVoxel() bool {
	if s.Representation == "" {
		return kinetics.SCMKindByKey(s.Kind).SubVoxel
	}
	return s.Representation == RepSubVoxel
}

// PSDOrDefault returns the SCM's PSD, or the kind's typical Rosin–Rammler
// law.
func (s SCM) PSDOrDefault() PSD {
	if s.PSD != nil {
		return *s.PSD
	}
	k := kinetics.SCMKindByKey(s.Kind)
	return PSD{RosinRammler: &RosinRammler{XUM: k.RRXUM, N: k.RRN}}
}

// IsBlend reports whether the binder holds any SCM.
func (c *Config) IsBlend() bool { return len(c.SCM) > 0 }

// checkSCM validates [[scm]] and the water ratio that goes with it, and
// leaves the water-to-binder ratio in Mix.WC.
func (c *Config) checkSCM(r *Raw) error {
	if len(c.SCM) == 0 {
		if c.Mix.WB != 0 {
			if c.Mix.WC != 0 && c.Mix.WC != c.Mix.WB {
				return r.errAt("mix.w_b", "%g differs from mix.w_c = %g: without [[scm]] they are the same ratio; give one", c.Mix.WB, c.Mix.WC)
			}
			if !(c.Mix.WB >= minWC && c.Mix.WB <= maxWC) {
				return r.errAt("mix.w_b", "%g: must be between %g and %g", c.Mix.WB, minWC, maxWC)
			}
			c.Mix.WC = c.Mix.WB
		}
		return nil
	}
	if c.Mix.WC != 0 && c.Mix.WC != c.Mix.WB {
		return r.errAt("mix.w_c", "with [[scm]] give mix.w_b, the water to binder (cement + SCMs) by mass: a w/c would leave open whether the SCMs count")
	}
	if !(c.Mix.WB >= minWC && c.Mix.WB <= maxWC) {
		if c.Mix.WB == 0 {
			return r.errAt("mix.w_b", "missing: a blend ([[scm]]) needs mix.w_b between %g and %g (water to binder by mass)", minWC, maxWC)
		}
		return r.errAt("mix.w_b", "%g: must be between %g and %g", c.Mix.WB, minWC, maxWC)
	}
	c.Mix.WC = c.Mix.WB
	seen := map[string]bool{}
	sum := 0.0
	for i, s := range c.SCM {
		key := func(k string) string { return fmt.Sprintf("scm.%d.%s", i, k) }
		kind := kinetics.SCMKindByKey(s.Kind)
		if kind == nil {
			return r.errAt(key("kind"), "%q: must be one of %s", s.Kind, kinetics.SCMKindKeys())
		}
		if seen[s.Kind] {
			return r.errAt(key("kind"), "%q appears twice: give each kind once (its mass_percent is the total)", s.Kind)
		}
		seen[s.Kind] = true
		if !(s.MassPercent >= 0 && s.MassPercent <= 100*kinetics.MaxSCMFraction) {
			return r.errAt(key("mass_percent"), "%g %%: must be between 0 and %g %% of the binder", s.MassPercent, 100*kinetics.MaxSCMFraction)
		}
		sum += s.MassPercent
		if a := s.AmorphousPercent; a != nil && !(*a >= 1 && *a <= 100) {
			return r.errAt(key("amorphous_percent"), "%g %%: must be between 1 and 100 (an SCM with no amorphous part cannot react: give it as cement.phases inert filler)", *a)
		}
		switch s.Representation {
		case "", RepParticles, RepSubVoxel:
		default:
			return r.errAt(key("representation"), "%q: must be %q or %q", s.Representation, RepParticles, RepSubVoxel)
		}
		if p := s.PSD; p != nil {
			switch {
			case p.RosinRammler == nil && p.Table == "":
				return r.errAt(key("psd"), "empty: give psd = { rosin_rammler = { x_um = …, n = … } } or psd = { table = \"file.csv\" }")
			case p.RosinRammler != nil && p.Table != "":
				return r.errAt(key("psd.table"), "give psd.rosin_rammler or psd.table, not both")
			case p.RosinRammler != nil:
				rr := p.RosinRammler
				if !(rr.XUM >= 0.01 && rr.XUM <= 1000) || math.IsInf(rr.XUM, 0) {
					return r.errAt(key("psd.rosin_rammler.x_um"), "%g µm: must be between 0.01 and 1000", rr.XUM)
				}
				if !(rr.N >= 0.3 && rr.N <= 5) {
					return r.errAt(key("psd.rosin_rammler.n"), "%g: must be between 0.3 and 5", rr.N)
				}
			}
		}
	}
	if sum > 100*kinetics.MaxSCMFraction {
		return r.errAt("scm", "the SCMs make %g %% of the binder: at most %g %%", sum, 100*kinetics.MaxSCMFraction)
	}
	return nil
}

// ResolvePSD returns the SCM's size distribution: its Rosin–Rammler law,
// its table (read relative to the config's folder), or the kind's typical
// law. key is the SCM's key for messages ("scm.0").
func (c *Config) ResolvePSD(i int) (*voxel.PSD, error) {
	s := c.SCM[i]
	p := s.PSDOrDefault()
	key := fmt.Sprintf("scm.%d.psd", i)
	if rr := p.RosinRammler; rr != nil {
		d, err := voxel.RosinRammler(rr.XUM, rr.N)
		if err != nil {
			return nil, c.Errorf(key+".rosin_rammler", "%v", err)
		}
		return d, nil
	}
	path := p.Table
	if !filepath.IsAbs(path) {
		path = filepath.Join(c.Dir, path)
	}
	data, err := ReadInput(path, "PSD table")
	if err != nil {
		return nil, c.Errorf(key+".table", "%v", err)
	}
	d, err := voxel.ReadPSDTable(bytes.NewReader(data))
	if err != nil {
		return nil, c.Errorf(key+".table", "%s: %s", path, Snippet(err.Error()))
	}
	return d, nil
}

// SurfacePerUM returns the specific surface S_v (µm⁻¹, surface per
// volume of powder) of a PSD taken as smooth spheres: 6 ∫ dPassing/x.
func SurfacePerUM(p *voxel.PSD) float64 {
	const rho = 1 // cancels: S_v = S_m·ρ
	return p.SpecificSurfaceM2PerKg(rho) * rho * 1e-3
}

// applySCMKinetics sets the sub-voxel surface of every SCM carried as
// sub-voxel powder, from its PSD, in p.
func (c *Config) applySCMKinetics(p *kinetics.Params) error {
	for i, s := range c.SCM {
		if !s.SubVoxel() {
			continue
		}
		psd, err := c.ResolvePSD(i)
		if err != nil {
			return err
		}
		d := p.DissolutionOf(kinetics.SCMKindByKey(s.Kind).Phase)
		if d == nil {
			return c.Errorf(fmt.Sprintf("scm.%d.kind", i), "no dissolution law for %s in [kinetics]", s.Kind)
		}
		d.SurfacePerUM = SurfacePerUM(psd)
	}
	return nil
}
