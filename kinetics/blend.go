package kinetics

import (
	"fmt"
	"math"
	"strings"
)

// SCMKind is a kind of supplementary cementitious material and the
// typical powder gelspace takes for it when a config gives no figure of
// its own.
type SCMKind struct {
	Key   string // config value of scm.kind
	Name  string
	Phase ID // the reactive (amorphous) part; the rest is Inert
	// AmorphousPercent is the typical glass or amorphous share, mass %.
	AmorphousPercent float64
	// RRXUM and RRN are the typical Rosin–Rammler x′ (µm) and n.
	RRXUM, RRN float64
	// SubVoxel says whether the powder is carried as sub-voxel powder
	// (kinetics.Dissolution.SurfacePerUM) by default.
	SubVoxel bool
}

// scmKinds are the kinds gelspace knows. Typical figures (common practice,
// from memory; the config may give its own): silica fume 97 % amorphous,
// primary particles about 0.1–0.2 µm; class F fly ash 80 % glass, median
// size near 15–20 µm; slag 95 % glass, ground about as fine as cement;
// metakaolin 90 % amorphous, median size a few µm.
var scmKinds = []SCMKind{
	{Key: "silica_fume", Name: "silica fume", Phase: SilicaFume, AmorphousPercent: 97, RRXUM: 0.15, RRN: 1.5, SubVoxel: true},
	{Key: "fly_ash", Name: "fly ash (class F)", Phase: FlyAsh, AmorphousPercent: 80, RRXUM: 20, RRN: 1.0},
	{Key: "slag", Name: "ground granulated blast-furnace slag", Phase: Slag, AmorphousPercent: 95, RRXUM: 12, RRN: 1.1},
	{Key: "metakaolin", Name: "metakaolin", Phase: Metakaolin, AmorphousPercent: 90, RRXUM: 4, RRN: 1.0},
}

// SCMKinds returns the known kinds (shared: do not modify).
func SCMKinds() []SCMKind { return scmKinds }

// SCMKindByKey returns the kind with config key k, or nil.
func SCMKindByKey(k string) *SCMKind {
	for i := range scmKinds {
		if scmKinds[i].Key == k {
			return &scmKinds[i]
		}
	}
	return nil
}

// SCMKindOf returns the kind whose reactive phase is id, or nil.
func SCMKindOf(id ID) *SCMKind {
	for i := range scmKinds {
		if scmKinds[i].Phase == id {
			return &scmKinds[i]
		}
	}
	return nil
}

// SCMKindKeys lists the kind keys for messages.
func SCMKindKeys() string {
	var k []string
	for _, s := range scmKinds {
		k = append(k, s.Key)
	}
	return strings.Join(k, ", ")
}

// BlendPart is one SCM of a binder: its reactive phase, its mass fraction
// of the binder and the amorphous share of it (0–1).
type BlendPart struct {
	Phase     ID
	MassFrac  float64
	Amorphous float64
}

// MaxSCMFraction bounds the SCMs' share of the binder.
const MaxSCMFraction = 0.8

// Blend returns the binder of cement c and the SCMs: the cement scaled to
// 1 − Σ parts, each SCM's amorphous share as its reactive phase and the
// rest as Inert. Mass fractions of the result sum to 1.
func (c *Composition) Blend(parts []BlendPart) (*Composition, error) {
	sum := 0.0
	for _, p := range parts {
		if !(p.MassFrac >= 0 && p.MassFrac <= MaxSCMFraction) || !(p.Amorphous > 0 && p.Amorphous <= 1) {
			return nil, fmt.Errorf("SCM %s: mass fraction %g (0–%g) or amorphous share %g (0–1] out of range", Lookup(p.Phase).Key, p.MassFrac, MaxSCMFraction, p.Amorphous)
		}
		if Lookup(p.Phase) == nil || Lookup(p.Phase).Role != RoleSCM {
			return nil, fmt.Errorf("phase id %d is not an SCM", p.Phase)
		}
		sum += p.MassFrac
	}
	if sum > MaxSCMFraction+1e-12 {
		return nil, fmt.Errorf("SCMs make %.1f %% of the binder: at most %.0f %%", 100*sum, 100*MaxSCMFraction)
	}
	var b Composition
	for id, m := range c.MassFrac {
		b.MassFrac[id] = m * (1 - sum)
	}
	for _, p := range parts {
		b.MassFrac[p.Phase] += p.MassFrac * p.Amorphous
		b.MassFrac[Inert] += p.MassFrac * (1 - p.Amorphous)
	}
	t := 0.0
	for _, m := range b.MassFrac {
		t += m
	}
	if math.Abs(t-1) > 1e-9 {
		return nil, fmt.Errorf("blend masses sum to %g, not 1", t)
	}
	return &b, nil
}

// PasteVolumeOf returns the share of the fresh paste at water-to-binder
// ratio wb taken by massFrac (of the powder c) of a solid of density rho.
func (c *Composition) PasteVolumeOf(massFrac, rho, wb float64) float64 {
	vs := c.SpecificVolumeCM3PerG()
	return massFrac / rho / (vs + wb/WaterDensity)
}
