package kinetics

import (
	"fmt"
	"math"
)

// GasConstant is R in J/(mol·K).
const GasConstant = 8.314462618

// RefTempK is the temperature at which rate constants are stated: 20 °C.
const RefTempK = 293.15

// Arrhenius returns the factor exp(−Ea/R (1/T − 1/Tref)) by which a rate
// constant stated at 20 °C changes at tempC, for an activation energy in
// kJ/mol.
func Arrhenius(eaKJPerMol, tempC float64) float64 {
	return math.Exp(-eaKJPerMol * 1e3 / GasConstant * (1/(tempC+273.15) - 1/RefTempK))
}

// Dissolution is the dissolution law of one phase. A surface voxel of the
// phase dissolves at the rate
//
//	k = v/h · (n_w + β·n_p) · g · A(T)
//
// in 1/s, where v is the surface recession velocity, h the voxel edge,
// n_w the number of its faces touching pore water, n_p the number touching
// C-S-H (dissolution through the product layer), β the through-product
// factor, g the solution factor (undersaturation of the silicates, sulfate
// inhibition of the aluminates) and A(T) the Arrhenius factor. Because v is
// a velocity and the rate is per exposed face, the law does not depend on
// the voxel size.
type Dissolution struct {
	Phase          ID
	VelocityUMPerH float64 // surface recession velocity at 20 °C, µm/h
	ThroughProduct float64 // β, 0–1
	// SulfateFactor is the retardation of the phase's dissolution in a
	// solution fully supplied with sulfate (the aluminates); 1 = none. The
	// factor in force follows the sulfate available to the solution through
	// Params.SulfateRetardation.
	SulfateFactor float64
	EaKJPerMol    float64 // apparent activation energy, kJ/mol
	// SurfacePerUM, when > 0, is the specific surface S_v (µm² per µm³ of
	// powder) of a powder finer than a voxel, carried as voxels of
	// sub-voxel powder (silica fume): each accessible voxel then dissolves
	// at v · S_v · g · A(T) — its own surface, not its voxel faces — if a
	// face touches pore water, β times that if it touches only product.
	// The rate per volume, and so the kinetics, do not depend on the voxel
	// size. 0 is the face law above.
	SurfacePerUM float64
}

// Params are the rate constants and growth rules of the engine. The zero
// value is not useful; start from DefaultParams.
//
// Defaults were chosen so that the embedded demo cement at w/c 0.5, 20 °C,
// saturated, lands inside the typical ranges of a general-use Portland cement (degree of
// hydration at 1, 7 and 28 days, main heat peak within the first day).
// They are a starting point: calibrate them to your own cement against an
// isothermal calorimetry curve (gelspace fit).
type Params struct {
	Dissolve []Dissolution

	// SilicateSaturation is the dissolved C-S-H, as voxels of product per
	// voxel of pore water, at which the solution is saturated with respect
	// to the silicates: their dissolution factor is g = 1 − c/c_sat.
	SilicateSaturation float64
	// CSHNucleationPerUM2H is the rate of heterogeneous C-S-H nucleation on
	// silicate surface in contact with water, at saturation, per µm² per
	// hour; it scales with c/c_sat.
	CSHNucleationPerUM2H float64
	// CHSaturation is the dissolved CH (voxels per voxel of pore water)
	// above which CH nucleates in the pore solution.
	CHSaturation float64
	// CHNucleationPerUM3H is the CH nucleation rate per µm³ of pore water
	// per hour at twice the saturation; it scales with (c/c_sat − 1)².
	CHNucleationPerUM3H float64
	// GypsumSolubilityMolPerL bounds the dissolved sulfate pool.
	GypsumSolubilityMolPerL float64
	// SulfateSupplyLengthUM is λ of the sulfate availability σ: the solid
	// sulfate that can reach the solution is counted as the exposed sulfate
	// area (faces touching water, and faces under product weighted by the
	// phase's through-product factor β) times λ. See SulfateAvailability.
	SulfateSupplyLengthUM float64
	// WaterHalfPorosity (φ½) and WaterExponent (m) shape the water and
	// space law of dissolution; see WaterFactor.
	WaterHalfPorosity, WaterExponent float64
	// SulfateHalf (σ½) and SulfateHill (n) shape the retardation law of the
	// aluminates; see SulfateRetardation.
	SulfateHalf, SulfateHill float64
	// AttemptPerH is the rate at which each dissolved product unit makes a
	// precipitation attempt (a random walk of WalkSteps through the pore
	// water), per hour.
	AttemptPerH float64
	// WalkSteps bounds one attempt; SpawnSteps bounds the first walk of a
	// unit from the site where it dissolved. Both are stated for 1 µm
	// voxels; the engine scales them by (1 µm / voxel edge)² so that a walk
	// explores the same distance (about √steps µm) at any resolution.
	WalkSteps, SpawnSteps int
	// ProductLengthUM is δ0 of the through-product law at 20 °C: a face
	// covered by product dissolves at β/(1 + δ/δ0) of the bare rate, δ being
	// the depth to which its grain has reacted (µm). Zero turns the
	// thickness dependence off.
	ProductLengthUM float64
	// ProductDensifyK (ΔT_b, kelvin) makes the product a tighter barrier at
	// higher curing temperature: δ0(T) = δ0 · exp(−(T − 20 °C)/ΔT_b); see
	// ProductLengthAt. Zero keeps δ0 the same at every temperature.
	ProductDensifyK float64
	// NucleationEaKJPerMol is the activation energy of nucleation and of
	// precipitation attempts.
	NucleationEaKJPerMol float64

	// Growth lists, per product, where its dissolved units may precipitate.
	Growth []Growth
}

// Growth is the precipitation rule of one product. A dissolved unit at a
// pore-water voxel sticks there with probability max over the six face
// neighbours of On[neighbour phase]; if one of the neighbours belongs to
// Seeds, Seeded is used for the other neighbours instead where it is
// larger. C-S-H uses Seeds to grow from its own nuclei and grains it
// already covers; CH has no Seeded list, so it grows only on CH crystals.
type Growth struct {
	Product ID
	On      map[ID]float64
	Seeds   []ID
	Seeded  map[ID]float64
}

// DefaultParams returns the default calibration.
func DefaultParams() Params {
	// Apparent activation energies, kJ/mol: per clinker phase C3S 41.8,
	// C2S 43.4, C3A 54.0, C4AF 34.1 — values quoted widely in the cement
	// modelling literature for the four clinker phases (from memory, source
	// not re-read); the sulfates, nucleation and precipitation take the
	// typical 40 kJ/mol of a Portland cement (ASTM C1074 guidance is
	// 40–45 kJ/mol, from memory).
	ea := 40.0
	return Params{
		Dissolve: []Dissolution{
			{Phase: C3S, VelocityUMPerH: 0.033, ThroughProduct: 0.18, SulfateFactor: 1, EaKJPerMol: 41.8},
			{Phase: C2S, VelocityUMPerH: 0.003, ThroughProduct: 0.15, SulfateFactor: 1, EaKJPerMol: 43.4},
			{Phase: C3A, VelocityUMPerH: 0.05, ThroughProduct: 0.1, SulfateFactor: 0.3, EaKJPerMol: 54.0},
			{Phase: C4AF, VelocityUMPerH: 0.025, ThroughProduct: 0.05, SulfateFactor: 0.4, EaKJPerMol: 34.1},
			{Phase: Gypsum, VelocityUMPerH: 5, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			{Phase: Hemihydrate, VelocityUMPerH: 10, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			{Phase: Anhydrite, VelocityUMPerH: 2, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			// Co-reactants only (velocity 0): drawn from exposed voxels when
			// an aluminate reaction calls for them.
			{Phase: AFt, VelocityUMPerH: 0, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			{Phase: Calcite, VelocityUMPerH: 0, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			{Phase: CH, VelocityUMPerH: 0, ThroughProduct: 0.5, SulfateFactor: 1, EaKJPerMol: ea},
			// Supplementary cementitious materials. They react only where
			// CH is at hand (the engine's CH gate): the pozzolans take it
			// as a co-reactant; slag needs it (and the alkaline solution
			// it stands for) as activator. Velocities are gelspace
			// calibrations that put the typical degrees of reaction at
			// 28 d, 20 °C inside published ranges (slag about 0.3–0.6,
			// class F fly ash about 0.1–0.3, silica fume well above half;
			// common practice, from memory); silica fume's rate per voxel
			// is v · S_v (see SurfacePerUM), set from its PSD by the run.
			// Apparent activation energies of the SCM reactions are
			// higher than the clinker's, about 50–60 kJ/mol (from memory,
			// rough).
			{Phase: SilicaFume, VelocityUMPerH: 1e-4, ThroughProduct: 0.3, SulfateFactor: 1, EaKJPerMol: 50},
			{Phase: FlyAsh, VelocityUMPerH: 0.0012, ThroughProduct: 0.15, SulfateFactor: 1, EaKJPerMol: 55},
			{Phase: Slag, VelocityUMPerH: 0.0035, ThroughProduct: 0.15, SulfateFactor: 1, EaKJPerMol: 50},
			{Phase: Metakaolin, VelocityUMPerH: 0.003, ThroughProduct: 0.2, SulfateFactor: 1, EaKJPerMol: 50},
		},
		SilicateSaturation:      0.0015,
		CSHNucleationPerUM2H:    0.00006,
		CHSaturation:            0.004,
		CHNucleationPerUM3H:     1e-5,
		GypsumSolubilityMolPerL: 0.015, // about 2.4 g/L CaSO4·2H2O at 20 °C (common practice)
		SulfateSupplyLengthUM:   0.3,
		WaterHalfPorosity:       0.15,
		WaterExponent:           4,
		SulfateHalf:             1.5,
		SulfateHill:             3,
		AttemptPerH:             6,
		WalkSteps:               250,
		SpawnSteps:              400,
		NucleationEaKJPerMol:    ea,
		ProductLengthUM:         0.6,
		ProductDensifyK:         10,
		Growth: []Growth{
			{Product: CSHOuter,
				On:    map[ID]float64{CSHInner: 0.15, CSHOuter: 0.15, CSHLowCa: 0.15, Calcite: 0.01},
				Seeds: []ID{CSHInner, CSHOuter, CSHLowCa},
				Seeded: map[ID]float64{C3S: 1, C2S: 1, C3A: 0.5, C4AF: 0.5, CH: 0.5, AFt: 0.5, AFm: 0.5, Calcite: 0.5, Inert: 0.3, Gypsum: 0.3,
					SilicaFume: 0.5, FlyAsh: 0.5, Slag: 0.5, Metakaolin: 0.5}},
			// The low-Ca C-S-H grows on the SCM it comes from and on any
			// C-S-H, as the clinker's C-S-H does on its own.
			{Product: CSHLowCa,
				On:     map[ID]float64{SilicaFume: 0.5, FlyAsh: 0.5, Slag: 0.5, Metakaolin: 0.5, CSHInner: 0.15, CSHOuter: 0.15, CSHLowCa: 0.15},
				Seeds:  []ID{CSHInner, CSHOuter, CSHLowCa},
				Seeded: map[ID]float64{C3S: 0.5, C2S: 0.5, CH: 0.5, AFt: 0.3, AFm: 0.3, Calcite: 0.3, Inert: 0.3}},
			{Product: Stratlingite, On: map[ID]float64{Stratlingite: 0.5, FlyAsh: 0.3, Slag: 0.3, Metakaolin: 0.3,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CSHLowCa: 0.03, CH: 0.03, AFt: 0.03, AFm: 0.03}},
			{Product: Hydrotalcite, On: map[ID]float64{Hydrotalcite: 0.5, Slag: 0.5,
				CSHInner: 0.03, CSHOuter: 0.03, CSHLowCa: 0.03, CH: 0.03}},
			{Product: CH, On: map[ID]float64{CH: 0.5}},
			{Product: AFt, On: map[ID]float64{C3A: 0.5, C4AF: 0.5, AFt: 0.5, AFm: 0.3, Gypsum: 0.2,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, Calcite: 0.03, Inert: 0.03}},
			{Product: AFm, On: map[ID]float64{C3A: 0.5, C4AF: 0.5, AFt: 0.5, AFm: 0.5,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, Calcite: 0.03, Inert: 0.03}},
			{Product: Monocarbonate, On: map[ID]float64{C3A: 0.5, C4AF: 0.5, AFt: 0.5, Monocarbonate: 0.5, Hemicarbonate: 0.5, Calcite: 0.5,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, Inert: 0.03}},
			{Product: Hemicarbonate, On: map[ID]float64{C3A: 0.5, C4AF: 0.5, AFt: 0.5, Monocarbonate: 0.5, Hemicarbonate: 0.5, Calcite: 0.5,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, Inert: 0.03}},
			{Product: Hydrogarnet, On: map[ID]float64{C3A: 0.5, C4AF: 0.5, Hydrogarnet: 0.5,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, AFt: 0.03, AFm: 0.03}},
			{Product: FH3, On: map[ID]float64{C4AF: 0.5, FH3: 0.5,
				C3S: 0.03, C2S: 0.03, CSHInner: 0.03, CSHOuter: 0.03, CH: 0.03, AFt: 0.03, AFm: 0.03, Hydrogarnet: 0.03}},
		},
	}
}

// SulfateAvailability returns σ, the sulfate available to the pore
// solution relative to a solution saturated with gypsum:
//
//	σ = (n_pool + λ · A_s · ρ_s) / (c_sat · V_w)
//
// with n_pool the dissolved sulfate (mol of CaSO4), A_s the exposed area
// of solid sulfate (µm², faces under product weighted by β), λ the supply
// length SulfateSupplyLengthUM (µm), ρ_s the molar density of the sulfate
// phase (mol/µm³, summed per phase by the caller into surfMol = λ·A_s·ρ_s),
// c_sat the gypsum solubility (mol/L) and V_w the pore-water volume (L).
// σ is about 1 for a saturated solution with no solid left, much more
// while gypsum surface is exposed, and falls to 0 as the solution is
// drained of sulfate. It returns 0 when there is no pore water.
func (p *Params) SulfateAvailability(poolMol, surfMol, waterL float64) float64 {
	sat := p.GypsumSolubilityMolPerL * waterL
	if !(sat > 0) {
		return 0
	}
	return (poolMol + surfMol) / sat
}

// WaterFactor returns the factor by which the water-filled capillary
// porosity φ_w (water-filled pore voxels over all voxels) slows every
// dissolution:
//
//	F_w(φ_w) = φ_w^m / (φ_w^m + φ½^m)
//
// Dissolved matter must leave a grain, through its product, into the pore
// water and find space there to precipitate; both the outward transport
// (the diffusivity of a capillary pore network falls steeply with its
// porosity, as in Archie's law — common practice) and the space to grow
// shrink with φ_w. So a dense paste (low w/c) slows well before Powers'
// space limit, and a sealed paste, whose pores empty as it shrinks, slows
// sooner than a saturated one (Powers; Taylor, Cement Chemistry 1997,
// §8 — from memory).
func (p *Params) WaterFactor(phiW float64) float64 {
	if !(phiW > 0) {
		return 0
	}
	x := math.Pow(phiW/p.WaterHalfPorosity, p.WaterExponent)
	return x / (1 + x)
}

// SulfateRetardation returns the factor by which sulfate in the solution
// slows the dissolution of a phase with retardation f (SulfateFactor) at
// sulfate availability σ:
//
//	g(σ) = f + (1 − f) / (1 + (σ/σ½)^n)
//
// A smooth law of the solution, after the adsorption of sulfate on the
// aluminate surfaces (Taylor, Cement Chemistry 1997, §7.5 — from memory):
// g = f while the solution is well supplied, g → 1 as σ falls below σ½.
// For a phase with f = 1 it is 1 whatever σ.
func (p *Params) SulfateRetardation(f, sigma float64) float64 {
	if f >= 1 {
		return 1
	}
	x := math.Pow(math.Max(sigma, 0)/p.SulfateHalf, p.SulfateHill)
	return f + (1-f)/(1+x)
}

// ProductLengthAt returns δ0 of the through-product law at tempC, in µm:
//
//	δ0(T) = δ0 · exp(−(T − 20 °C)/ΔT_b)
//
// Hydration product formed at a higher temperature is denser and less
// permeable — C-S-H density rises with curing temperature (Gallucci, Zhang
// & Scrivener, Cem. Concr. Res. 53 (2013), from memory: about 1.9 g/cm³
// at 5 °C to about 2.1 at 60 °C) and the inner product round the grains
// is denser and more uniform (Kjellsen & Detwiler, Cem. Concr. Res. 22
// (1992), from memory) — so a grain reacts through it more slowly for a
// given thickness. This is the crossover effect of Verbeck & Helmuth
// (1968): faster early hydration but equal or lower late hydration at high
// temperature. ΔT_b is a calibration constant of the model (the density
// figures fix its sign, not its size).
func (p *Params) ProductLengthAt(tempC float64) float64 {
	if p.ProductDensifyK <= 0 {
		return p.ProductLengthUM
	}
	return p.ProductLengthUM * math.Exp(-(tempC-20)/p.ProductDensifyK)
}

// DissolutionOf returns the dissolution law of a phase, or nil.
func (p *Params) DissolutionOf(id ID) *Dissolution {
	for i := range p.Dissolve {
		if p.Dissolve[i].Phase == id {
			return &p.Dissolve[i]
		}
	}
	return nil
}

// GrowthOf returns the growth rule of a product, or nil.
func (p *Params) GrowthOf(id ID) *Growth {
	for i := range p.Growth {
		if p.Growth[i].Product == id {
			return &p.Growth[i]
		}
	}
	return nil
}

// Validate reports the first parameter outside its range.
func (p *Params) Validate() error {
	for _, d := range p.Dissolve {
		name := Lookup(d.Phase).Key
		switch {
		case d.VelocityUMPerH < 0 || math.IsNaN(d.VelocityUMPerH):
			return fmt.Errorf("kinetics.%s.velocity_um_per_h = %g: must be ≥ 0", name, d.VelocityUMPerH)
		case d.ThroughProduct < 0 || d.ThroughProduct > 1:
			return fmt.Errorf("kinetics.%s.through_product = %g: must be in [0, 1]", name, d.ThroughProduct)
		case d.SulfateFactor < 0 || d.SulfateFactor > 1:
			return fmt.Errorf("kinetics.%s.sulfate_factor = %g: must be in [0, 1]", name, d.SulfateFactor)
		case d.EaKJPerMol < 0 || d.EaKJPerMol > 150:
			return fmt.Errorf("kinetics.%s.ea_kj_per_mol = %g: must be in [0, 150]", name, d.EaKJPerMol)
		case !(d.SurfacePerUM >= 0 && d.SurfacePerUM <= 1000):
			return fmt.Errorf("kinetics.%s.surface_per_um = %g: must be in [0, 1000] µm⁻¹", name, d.SurfacePerUM)
		}
	}
	pos := []struct {
		key string
		v   float64
	}{
		{"silicate_saturation", p.SilicateSaturation}, {"csh_nucleation_per_um2_h", p.CSHNucleationPerUM2H},
		{"ch_saturation", p.CHSaturation}, {"ch_nucleation_per_um3_h", p.CHNucleationPerUM3H},
		{"gypsum_solubility_mol_per_l", p.GypsumSolubilityMolPerL}, {"attempt_per_h", p.AttemptPerH},
		{"sulfate_supply_length_um", p.SulfateSupplyLengthUM}, {"sulfate_half", p.SulfateHalf}, {"sulfate_hill", p.SulfateHill},
		{"water_half_porosity", p.WaterHalfPorosity}, {"water_exponent", p.WaterExponent},
	}
	for _, q := range pos {
		if !(q.v > 0) || math.IsInf(q.v, 0) {
			return fmt.Errorf("kinetics.%s = %g: must be > 0", q.key, q.v)
		}
	}
	if p.WalkSteps < 1 || p.WalkSteps > 100000 || p.SpawnSteps < 1 || p.SpawnSteps > 100000 {
		return fmt.Errorf("kinetics.walk_steps = %d, spawn_steps = %d: each must be in [1, 100000]", p.WalkSteps, p.SpawnSteps)
	}
	if p.ProductLengthUM < 0 || p.ProductLengthUM > 100 {
		return fmt.Errorf("kinetics.product_length_um = %g: must be in [0, 100]", p.ProductLengthUM)
	}
	if p.ProductDensifyK < 0 || p.ProductDensifyK > 1000 || math.IsNaN(p.ProductDensifyK) {
		return fmt.Errorf("kinetics.product_densify_k = %g: must be in [0, 1000] (0 = off)", p.ProductDensifyK)
	}
	if p.NucleationEaKJPerMol < 0 || p.NucleationEaKJPerMol > 150 {
		return fmt.Errorf("kinetics.nucleation_ea_kj_per_mol = %g: must be in [0, 150]", p.NucleationEaKJPerMol)
	}
	return nil
}
