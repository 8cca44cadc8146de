// Package percolation measures the connectivity and transport of a voxel
// microstructure: cluster labelling, spanning, the set point (solid
// percolation), capillary-pore depercolation and the relative diffusivity
// of the pore network.
//
// Everything works on plain slices over a Box, with the voxel at (x, y, z)
// at index x + NX*(y + NY*z), the layout of voxel.Grid; phase ids follow
// package kinetics (blocks by role: pores 1–19, anhydrous 20–99, hydrates
// 100–199).
//
// # Clusters
//
// Two voxels of a set are neighbours when they share a face
// (6-connectivity); on a periodic axis the face at coordinate N−1 touches
// the face at 0. Clusters are the connected components, found by the
// Hoshen–Kopelman method (Labeler): one raster pass with union–find over
// provisional labels, a pass over the periodic faces, and a relabelling pass
// that numbers clusters in the order of their first voxel. A naive flood
// fill in the tests gives the identical labelling.
//
// A cluster spans an axis:
//
//   - along an open (non-periodic) axis, when it has voxels on both faces,
//     at coordinate 0 and N−1;
//   - along a periodic axis, when it wraps: it contains a closed path that
//     winds around the box along that axis, so that in the infinite
//     periodic medium the box stands for, its copies join into one cluster
//     that is unbounded along the axis. Touching both faces means nothing
//     there (every cluster that crosses the periodic face does), so the
//     labelling tracks the cell offset of each provisional label across
//     periodic bonds and detects the loops whose windings differ.
//
// A box one voxel thick along an open axis is spanned along it by every
// cluster. The connected fraction of a set is the number of its voxels in
// clusters that span at least one axis divided by the number of its voxels
// (0 for an empty set); Connectivity also reports which axes are spanned.
//
// Pores labels the capillary pore space (kinetics.IsPore: water-filled and
// empty pores). Solids labels the solid skeleton with a bond rule: the sites
// are the solid voxels, and two face neighbours are bonded when either is a
// hydrate, or when both are anhydrous and belong to the same original
// particle (particle id ≠ 0). Grains that merely touch are not bonded until
// hydrate joins them; the set point is when the solids first span.
//
// # Diffusivity
//
// Diffusivity solves steady diffusion (equivalently conduction) on the
// voxel grid. Each voxel i has a relative diffusivity d_i = D/D0 from its
// phase, D0 being that of bulk pore water; the defaults
// (DefaultDiffusivities) are 1 for every pore id, 1/400 for inner and outer
// C-S-H (the gel-pore diffusivity relative to bulk water of Garboczi &
// Bentz, J. Mater. Sci. 27 (1992) 2083) and 0 for every other phase. Each
// pair of face neighbours is joined by the conductance of two half voxels in
// series, the harmonic mean
//
//	g_ij = 2 d_i d_j / (d_i + d_j)   (0 when either is 0),
//
// and the potential u at voxel centres obeys Kirchhoff's law
// Σ_j g_ij (u_j − u_i) = 0 at every voxel. Lengths are in voxels, so D/D0
// does not depend on the voxel size.
//
// For a unit gradient along axis a, u = w − x_a, and the fluctuation w is
// solved for:
//
//   - along a periodic axis, w is periodic (a macroscopic gradient with
//     periodic fluctuations: the bond that crosses the periodic face sees
//     the jump of x_a by N);
//   - along an open axis, the faces x_a = 0 and x_a = N−1 touch electrodes
//     half a voxel outside the box, held at u = +1/2 and u = −(N − 1/2), so
//     the potential drop is N over the length N; each face voxel joins its
//     electrode through its own half voxel, conductance 2 d_i. Open axes
//     other than a are insulating faces.
//
// Both choices make layered media exact: layers parallel to the field give
// the arithmetic mean of the layer diffusivities and layers in series the
// harmonic mean. D/D0 is the dissipation per unit volume,
//
//	D/D0 = (1/V) Σ_bonds g_ij (u_i − u_j)²   (plus the electrode links),
//
// which at the solution equals the mean current density; the formation
// factor is its inverse (+Inf when D = 0).
//
// Only clusters of conducting voxels that span axis a carry current along
// it; every other voxel (insulating, or in a conducting island or a cluster
// bounded along a) is left out of the solve, which removes the singular
// blocks of isolated islands. When no conducting cluster spans, D/D0 = 0
// with no iteration. A cluster that wraps along a periodic axis still has
// the constant as a null vector; its right-hand side is consistent, and
// conjugate gradients converge on it without pinning.
//
// The linear system is solved by preconditioned conjugate gradients from
// w = 0, the preconditioner being one symmetric V-cycle of aggregation
// multigrid, with aggregates that are the pieces of 2×2×2 blocks
// connected by strong bonds, Galerkin coarse operators and red–black
// Gauss–Seidel smoothing
// (see mg.go; a box of at most 512 voxels uses the Jacobi diagonal alone),
// until the relative residual ‖b − Aw‖₂/‖b‖₂ falls below
// DiffusivityOptions.Tol (default 1e-6; tolerances below FloorTol, 1e-7,
// are raised to it) or the iteration cap is hit (an error, with the
// estimate reached). On the 28-day 100³ paste of testdata this takes 31
// iterations per axis to 1e-6 and 25–26 to 1e-5 (52–53 and 42–43 with a
// plain V-cycle, 86–88 and 63–65 with aggregates that also ignored
// strength). D/D0 is then evaluated
// from the final w as E(w) = c0 − 2bᵀw + wᵀAw (c0 the dissipation at
// w = 0), the exact dissipation of the stored iterate, which exceeds the
// true one only to second order in the error of w. The three axes of a
// periodic box share the operator, and so the multigrid levels, when the
// same clusters span them. The fine-level passes run over contiguous
// ranges of z planes on DiffusivityOptions.Workers goroutines, and the
// larger coarse levels by slabs of planes in a fixed two-colour order;
// every sum is formed per plane (or slab) and added in a fixed order, so
// results are identical for any number of workers or GOMAXPROCS.
//
// Storage is per voxel of the box, for a box of N voxels: the phase ids are
// the caller's, and the conductance of a bond is looked up from the phase
// ids of its two voxels in a table of single-precision harmonic means, so
// no conductance is stored; the vectors w, r, p and z (which also holds
// A p) are single precision (4 × 4 bytes) and the smoother's inverse
// diagonal a one-byte code into a table of its distinct values; the
// labelling of the conducting clusters (shared with the caller's Labeler
// through Solver.Labeler) is read once into a byte per voxel of the axes
// its cluster spans, which also codes the voxel's aggregate on the first
// coarse level (with an int32 per 2×2×2 block), and its buffers are then
// let go; about 18.5 bytes per voxel, plus the coarse levels, whose size
// follows the active set and which keep only their rows, and in single
// precision their inverse diagonal, iterate and right-hand side, and
// their aggregates (the diagonals, block coordinates and unmerged entries
// of the build are dropped once the levels stand, and the vectors are
// allocated after them). On the 100³ paste of testdata, 64 % of the voxels
// active, the first level has 0.32 aggregates per active voxel and the
// solver holds 39 bytes per voxel of the box in all
// (BenchmarkDiffusivityHydrated100).
// The stencils of the iteration (the product A p, the fine smoothing and
// residual) are summed in single precision, every sum over voxels, each
// coarse row, the setup and the dissipation in double precision; the
// single-precision vectors and stencils change D/D0 by less than 1e-8
// relative on the test pastes and 2e-10 on the 100³ paste solved to 1e-6
// (TestDiffusivityFloat64, TestDiffusivityHydrated).
package percolation
