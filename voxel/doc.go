// Package voxel holds the periodic 3D lattice of gelspace, the particle size
// distribution and the packing of digitised particles, the discrete-event
// hydration engine, checkpoints, and volume files (VTK ImageData .vti and
// NumPy .npy).
//
// # The hydration engine
//
// Model. Hydration runs through the solution. Clinker and sulfate voxels
// dissolve at faces that touch pore water, or more slowly through a C-S-H
// layer; each dissolution runs one reaction of the kinetics table, whose
// products leave the site as dissolved units, one unit per voxel of product.
// Units move as random walkers through the pore water and precipitate where
// their product's growth rule (kinetics.Growth) lets them stick: C-S-H on
// its own nuclei and on what they cover — inner product in a voxel that
// belonged to an original grain, outer product in the original water space
// — CH on its few crystals, the aluminate hydrates on and near aluminate
// and ferrite. Units that find no site stay dissolved; they make up the
// solution's concentration, which slows the silicates as it approaches
// saturation and drives the nucleation of C-S-H on silicate surface and of
// CH in the pores. Co-reactants — the sulfate of gypsum, hemihydrate and
// anhydrite; ettringite once the sulfate is gone — are taken from
// well-mixed dissolved pools, dissolving exposed solid voxels as needed.
// C3A and C4AF make ettringite while sulfate lasts, monosulfate from
// ettringite after, hydrogarnet (with FH3 from the ferrite) when neither is
// left. Limestone and inert filler do not react; they offer surface.
//
// Kinetic stages are not scripted. The first dissolution saturates the
// solution and stops (the dormant period); C-S-H nuclei form at a rate
// proportional to silicate surface and saturation; each nucleus is a site
// where units precipitate, which lets dissolution go on near the growing
// product (acceleration, the main heat peak); then C-S-H covers the grains,
// which dissolve only through it, ever more slowly as the product thickens,
// and the pore space and water run out (deceleration).
//
// Clock. Every dissolution, nucleation and precipitation attempt is an event
// with a rate in 1/s; the engine uses Gillespie's direct method: the waiting
// time is exponential with the total rate and the event is chosen in
// proportion to its rate. Surface voxels are kept in rate classes — one
// indexed set per phase and exposure (faces touching water, faces touching
// C-S-H) — so choosing and updating an event costs O(1), whatever the box
// size. The thickness dependence of through-product dissolution is applied
// by thinning (the event drawn at the class rate is accepted with the ratio
// of the true rate to it), which keeps the clock exact. A stop at any age
// keeps the drawn next event, so where a run is stopped or checkpointed
// does not change what follows.
//
// Rates (defaults in kinetics.DefaultParams; all stated at 20 °C and scaled
// by the Arrhenius factor exp(−Ea/R (1/T − 1/293.15)), Ea 40 kJ/mol):
//
//	dissolution of a surface voxel   k = v/h · (n_w + β·f·n_p) · g · A(T) · w     [1/s]
//	  v   surface recession velocity, µm/h   (C3S 0.045, C2S 0.005, C3A 0.6, C4AF 0.15,
//	                                          gypsum 5, hemihydrate 10, anhydrite 2)
//	  h   voxel edge, µm; n_w, n_p faces touching water, C-S-H
//	  β   through-product factor (clinker 0.15, sulfates 0.5)
//	  f   1/(1 + δ/δ0), δ the depth (µm) to which the voxel's grain has reacted, δ0 1 µm
//	  g   silicates: 1 − c/c_sat (c_sat 0.002 voxels of dissolved C-S-H per voxel of water);
//	      C3A, C4AF: sulfate factor 0.01, 0.05 while solid sulfate remains;
//	      sulfates: 1 − pool/solubility (gypsum 0.015 mol/L)
//	  w   W/(W + 0.01 N), W water voxels, N all voxels: hydration stops without water
//	C-S-H nucleation                 J · A_silicate · min(1, c/c_sat)              [1/s]
//	  J   6e-5 per µm² per h; A_silicate silicate face area touching water, µm²
//	CH nucleation                    J_CH · V_water · (c_CH/c_sat,CH − 1)²         [1/s]
//	  J_CH 1e-5 per µm³ per h; c_sat,CH 0.004 voxels per voxel of water
//	precipitation attempt            6 per h per dissolved unit; a walk of ≤ 250 steps
//	                                 (≤ 400 from the dissolution site) at 1 µm voxels,
//	                                 × (1 µm/h)² at other sizes: the same distance in µm
//
// Time-scale separation. Diffusion over a few µm takes milliseconds, far
// less than any reaction time, so the steps of a walk take no clock time: a
// walk samples where a unit precipitates; the attempt rate only sets how
// soon a unit that found no site tries again. A unit that fails 12 attempts
// once its product fills a thousandth of the box is taken to be trapped in
// a pore without a site, and precipitates on the next solid surface its
// walk meets.
//
// Volumes. Every reaction turns one voxel of its primary phase into product
// volumes from the molar volumes of the phase table; the fractional voxels
// of each product of each reaction are carried in accumulators, so each
// product's voxel count stays within one voxel of the stoichiometry.
// Saturated curing draws outside water into the chemical shrinkage; sealed
// curing empties the water voxels at the centres of the largest pores (the
// largest city-block distance to a solid) as the shrinkage grows, and
// hydration slows and stops as the water runs out.
//
// Calibration. The defaults put the demo cement at w/c 0.5 and 20 °C inside
// the typical ranges of REFERENCES.md (main heat peak near 9 h, α ≈ 0.35,
// 0.65, 0.82 at 1, 7, 28 days). They describe a typical Portland cement,
// not a given one: calibrate them against a measured isothermal calorimetry
// curve (gelspace fit, or the [kinetics] keys of a config).
package voxel
