package run

import (
	"math"

	"gelspace/kinetics"
	"gelspace/voxel"
)

// Quantities derived from each row of series.csv for comparison with lab
// measurements: Powers' gel–space ratio and porosities, phase contents by
// mass, the equivalent age at 20 °C and the formation factor. Every
// volume is a fraction of the paste volume (the box and the carried
// coarse grains' outlines: cement, hydrates, water-filled and empty
// pores); every mass is per 100 g of the cement the engine counts
// (CementG, the carried grains included).

// GelSpaceRatio is Powers' gel–space ratio of a Portland-cement paste of
// water-to-cement ratio wc at degree of hydration alpha, the volume of
// hydration product (gel) over the space available to it,
//
//	x = 0.68 α / (0.32 α + w/c),
//
// as given by Mindess, Young & Darwin, Concrete (2003) (from memory).
// Powers related compressive strength to x³; gelspace reports x only.
func GelSpaceRatio(alpha, wc float64) float64 {
	return 0.68 * alpha / (0.32*alpha + wc)
}

// GelPoreFraction is the volume fraction of gel pores in C-S-H as the
// model carries it (saturated, with its gel water): Powers' hydration
// product holds 0.60 volumes of gel water in 2.12 volumes of product per
// volume of cement reacted, 0.60/2.12 = 0.28 (Powers & Brownyard 1947,
// as summarised by Hansen 1986 — from memory). gelspace puts all gel
// pores in C-S-H; CH, AFt and AFm are counted as dense.
const GelPoreFraction = 0.28

// GelPorosity is the gel-pore volume as a fraction of the paste volume,
// from the C-S-H volume fraction vCSH of the paste:
//
//	φ_gel = 0.28 · V_C-S-H.
func GelPorosity(vCSH float64) float64 { return GelPoreFraction * vCSH }

// Equivalent age at the reference temperature by the Arrhenius
// equivalent-age function that ASTM C1074 (maturity method) defines:
//
//	t_e = Σ exp(−E/R · (1/T − 1/T_r)) Δt,
//
// T the mean temperature over the interval Δt and T_r = 293.15 K
// (20 °C), in kelvin; E the apparent activation energy
// (output.equivalent_age_ea_kj_per_mol, 40 kJ/mol by default: the order
// ASTM C1074 gives for a general-use cement, from memory).
const (
	EquivalentAgeRefC = 20.0
	gasConstant       = 8.314462618 // J/(mol·K)
	kelvin0C          = 273.15
)

// EquivalentAgeFactor is the Arrhenius factor exp(−E/R (1/T − 1/T_r)) of
// an interval at tempC, °C, for an activation energy eaKJPerMol, kJ/mol,
// against the reference temperature of 20 °C.
func EquivalentAgeFactor(tempC, eaKJPerMol float64) float64 {
	ref := float64(EquivalentAgeRefC) // in float64, as tempC: exactly 1 at 20 °C
	return math.Exp(-eaKJPerMol * 1000 / gasConstant * (1/(tempC+kelvin0C) - 1/(ref+kelvin0C)))
}

// Chloride estimate: D_eff = D0(Cl⁻)/F (Nernst–Einstein, with F the
// formation factor of the pore network), D0 the free-solution diffusion
// coefficient of Cl⁻ at 25 °C at infinite dilution, 2.03×10⁻⁹ m²/s (CRC
// Handbook of Chemistry and Physics, from memory).
const ChlorideD0M2PerS = 2.03e-9

// ChlorideDEff returns the effective chloride diffusion coefficient of the
// paste, m²/s, for a formation factor f (≥ 1; +Inf gives 0).
func ChlorideDEff(f float64) float64 { return ChlorideD0M2PerS / f }

// massPer100G is the mass of phase id in the box per 100 g of cement.
func massPer100G(e *voxel.Engine, id kinetics.ID) float64 {
	a := e.Grid().VoxelUM * 1e-4 // cm
	return 100 * e.PasteCount(id) * a * a * a * kinetics.Lookup(id).DensityGPerCM3 / e.CementG()
}

// derive fills the derived columns of row r from the engine's present
// state and the previous row (nil for the first): r's cheap and
// diffusivity columns must be set.
func (h *hydration) derive(r, prev []float64) {
	n := h.e.PasteVoxels()
	vCSH := (h.e.PasteCount(kinetics.CSHInner) + h.e.PasteCount(kinetics.CSHOuter) + h.e.PasteCount(kinetics.CSHLowCa)) / n
	r[colGelSpace] = GelSpaceRatio(r[colAlpha], h.cfg.Mix.WC)
	r[colGelPor] = GelPorosity(vCSH)
	r[colTotPor] = r[colCapPor] + r[colGelPor]
	r[colCH] = massPer100G(h.e, kinetics.CH)
	r[colBoundW] = 100 * r[colNonEvap]
	r[colAFt] = massPer100G(h.e, kinetics.AFt)
	r[colAFm] = massPer100G(h.e, kinetics.AFm)
	r[colCSH] = massPer100G(h.e, kinetics.CSHInner) + massPer100G(h.e, kinetics.CSHOuter) + massPer100G(h.e, kinetics.CSHLowCa)
	if !math.IsNaN(r[colDiff]) {
		r[colFormation] = 1 / r[colDiff] // +Inf when no path conducts
	}
	prevT, prevC, prevE := 0.0, h.st.StartTempC, 0.0
	if prev != nil {
		prevT, prevC, prevE = prev[colTime], prev[colTemp], prev[colEqAge]
	}
	meanC := 0.5 * (prevC + r[colTemp])
	r[colEqAge] = prevE + EquivalentAgeFactor(meanC, h.cfg.Output.EquivalentAgeEaKJPerMol)*(r[colTime]-prevT)
}
