// Package voxel holds the periodic 3D lattice of gelspace, the particle size
// distribution and the packing of digitised particles, the discrete-event
// hydration engine, checkpoints, and volume files (VTK ImageData .vti and
// NumPy .npy).
//
// # The hydration engine
//
// Model. Hydration runs through the solution. Clinker and sulfate voxels
// dissolve at faces that touch pore water, or more slowly through the
// product around them — any hydrate face counts (C-S-H, CH, ettringite,
// the AFm phases), so a voxel buried in product is never stranded; each
// dissolution runs one reaction of the kinetics table, whose products
// leave the site as dissolved units, one unit per voxel of product. Units
// move as random walkers through the pore water and precipitate where
// their product's growth rule (kinetics.Growth) lets them stick: C-S-H on
// its own nuclei and on what they cover — inner product in a voxel that
// belonged to an original grain, outer product in the original water space
// — CH on its few crystals, the aluminate hydrates on and near aluminate
// and ferrite. Units that find no site stay dissolved; they make up the
// solution's concentration, which slows the silicates as it approaches
// saturation and drives the nucleation of C-S-H on silicate surface and of
// CH in the pores. Co-reactants are taken from well-mixed dissolved pools:
// the sulfate of gypsum, hemihydrate and anhydrite (a pool bounded by the
// gypsum solubility), and ettringite, calcite and CH, whose exposed voxels
// are dissolved as a reaction calls for them. C3A and C4AF run the first
// reaction of their sequence in the kinetics table (kinetics.Sequence)
// whose co-reactants the solution can supply: ettringite while sulfate
// lasts; monocarbonate with calcite (hemicarbonate from the last of it),
// which leaves ettringite stable; monosulfate from ettringite once calcite
// is gone; hydrogarnet (with FH3 from the ferrite) when nothing else is
// left. Inert filler does not react; it offers surface.
//
// Supplementary cementitious materials. An SCM voxel (silica fume,
// fly-ash glass, slag glass, metakaolin) runs its one reaction of the
// kinetics table like a clinker voxel, with two rules of its own. It reacts
// only once portlandite has formed — the pore solution is then saturated
// with CH and alkaline — and only while the CH its reaction takes (the
// pozzolans; slag takes none but needs it as activator) can be had from the
// solution: the dissolved CH units first, then exposed CH voxels; where it
// cannot, its rate is zero, and the engine records the age (CHRanOut). A
// powder finer than a voxel (silica fume) is carried as single-voxel
// agglomerates that react at v·S_v (kinetics.Dissolution.SurfacePerUM), S_v
// its specific surface per volume, if a face touches pore water, β times
// that under product only: the rate per volume, and the answer, do not
// depend on the voxel size.
//
// Sulfate balance. Sulfate adsorbed from the solution retards the
// aluminates. The retardation follows σ, the sulfate available to the
// solution relative to gypsum saturation — the dissolved pool plus the
// exposed sulfate surface times a supply length — through the smooth law
// g(σ) = f + (1 − f)/(1 + (σ/σ½)^n) of kinetics.Params.SulfateRetardation:
// g = f while gypsum is exposed, rising to 1 as the last of it dissolves
// and the pool drains. No single voxel switches the chemistry.
//
// Water and space. Every dissolution is multiplied by
// F_w = φ_w^m/(φ_w^m + φ½^m), φ_w the water-filled capillary porosity of
// the box (kinetics.Params.WaterFactor): dense pastes slow well before
// Powers' space limit, and sealed pastes, whose pores empty as they
// shrink, slow sooner than saturated ones.
//
// Temperature. Each phase has its own activation energy; the
// through-product law's length δ0 shortens with temperature,
// δ0(T) = δ0 exp(−(T − 20 °C)/ΔT_b) (kinetics.Params.ProductLengthAt):
// product formed warm is denser and a tighter barrier, which gives the
// crossover effect (faster early, equal or lower late hydration).
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
// Rates (defaults in kinetics.DefaultParams, stated at 20 °C; A_i(T) =
// exp(−Ea_i/R (1/T − 1/293.15)) the Arrhenius factor of phase i):
//
//	dissolution of a surface voxel   k = v/h · (n_w + β·f·n_p) · g · A_i(T) · F_w     [1/s]
//	  v   surface recession velocity, µm/h   (C3S 0.033, C2S 0.003, C3A 0.05, C4AF 0.025,
//	                                          gypsum 5, hemihydrate 10, anhydrite 2;
//	                                          ettringite, calcite, CH 0: co-reactants only)
//	  Ea  kJ/mol                              (C3S 41.8, C2S 43.4, C3A 54.0, C4AF 34.1,
//	                                          sulfates, nucleation, precipitation 40)
//	  h   voxel edge, µm; n_w, n_p faces touching water, any hydrate
//	  β   through-product factor (C3S 0.18, C2S 0.15; C3A 0.1; C4AF 0.05; sulfates 0.5)
//	  f   1/(1 + δ/δ0(T)), δ the depth (µm) to which the voxel's grain has reacted,
//	      δ0(T) = 0.6 µm · exp(−(T − 20 °C)/10 K)
//	  g   silicates: 1 − c/c_sat (c_sat 0.0015 voxels of dissolved C-S-H per voxel of water);
//	      C3A, C4AF: f_S + (1 − f_S)/(1 + (σ/1.5)³), f_S 0.3 and 0.4,
//	        σ = (n_pool + 0.3 µm · A_s · ρ_s)/(c_gyp · V_w), A_s the exposed sulfate
//	        area (µm², product faces weighted by β), ρ_s its mol/µm³, V_w the pore water;
//	      sulfates: 1 − pool/solubility (gypsum c_gyp 0.015 mol/L)
//	  F_w φ_w⁴/(φ_w⁴ + 0.15⁴), φ_w the water-filled pore voxels over all voxels
//	C-S-H nucleation                 J · A_silicate · min(1, c/c_sat)              [1/s]
//	  J   6e-5 per µm² per h; A_silicate silicate face area touching water, µm²
//	CH nucleation                    J_CH · V_water · (c_CH/c_sat,CH − 1)²         [1/s]
//	  J_CH 1e-5 per µm³ per h; c_sat,CH 0.004 voxels per voxel of water
//	precipitation attempt            6 per h per dissolved unit; a walk of ≤ 250 steps
//	                                 (≤ 400 from the dissolution site) at 1 µm voxels,
//	                                 × (1 µm/h)² at other sizes: the same distance in µm
//
// Heat. Each reaction releases its heat per gram of its primary phase
// (kinetics.Reaction.HeatJPerG, sources there); heat, chemical shrinkage
// and water are per gram of the whole cement as tested — clinker, sulfate
// carrier, limestone and other fillers — as calorimetry reports them.
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
// Carried coarse grains. The powder coarser than the box's largest class
// (half its edge) is not packed but carried by the engine (Engine.Carry,
// coarse.go) as populations of shrinking spheres per size bin: they
// dissolve by the same per-phase law as the lattice's surface voxels, on
// the area a digitised sphere of their size would have, covered by product
// as the lattice's grains of the same phase are, slowed by their own
// reacted depth, in the same solution; one voxel of product per voxel
// reacted stays in their outline as inner product and the rest
// precipitates in the lattice's pores, so they share its water and space.
// The lattice holds all the water of the mix at its w/c and the finer
// powder; the carried grains' volume is virtual (their outlines, Vc, are
// added to the lattice to make the paste). Their space is not taken from
// the lattice's pores: the lattice holds exactly the mix's water and finer
// powder, and the real coarse grains are solid outside it. The full model
// and what is not carried over are in coarse.go.
//
// Calibration. The defaults put the default cement (RW-G: C3S 58, C2S 17,
// C3A 7.5, C4AF 10.5, gypsum 5, limestone 2 mass %; Rosin–Rammler x′ 14 µm,
// n 1.05) at w/c 0.5, 20 °C, saturated, on the 100³ box of 1 µm voxels,
// inside the typical ranges of a general-use Portland cement (Taylor,
// Cement Chemistry 1997, ch. 7, from memory): dormant minimum near 1–2 h,
// main heat peak near 9 h, gypsum used up near 18 h with a lower
// sulfate-depletion shoulder after the main peak; α ≈ 0.33, 0.59, 0.77 at
// 1, 7 and 28 days (C3S 0.43 at 1 d and 0.87 at 28 d, C2S 0.46, C3A 0.33
// and 0.86, C4AF 0.64 at 28 d); heat ≈ 270 J/g at 3 d and 315 J/g at 7 d.
// At 10 and 35 °C the main peak moves to about 15 and 4 h (apparent
// activation energy near 40 kJ/mol) and α(28 d) is 0.76 and 0.74. They
// describe a typical Portland cement, not a given one: calibrate them
// against a measured isothermal calorimetry curve (gelspace fit, or the
// [kinetics] keys of a config).
package voxel
