// Package run is one gelspace run of a cement paste, without the command
// line: resolve the config into a mix (Resolve), pack the initial
// microstructure (Pack), hydrate it on a physical clock, analyse the
// connectivity of solids and pores at every output age, refine the set
// point and the capillary-pore depercolation by bisection, and write the
// outputs (Run). Analyze measures a saved or imported volume.
//
// The model: the box is a periodic cube of Config.Box.Voxels³ voxels of
// Config.Box.VoxelUM µm, packed with multi-phase clinker grains and
// sulfate, filler and water at the config's w/c; the engine (package
// voxel, with the chemistry of package kinetics) advances it through a
// schedule of sample ages. The paste has set when its solids first
// connect across all three axes, and its capillary pores have
// depercolated when they no longer span any axis (package percolation).
//
// Units are the trade's: ages in hours, heat in J per g of cement, heat
// flow in mW per g, chemical shrinkage in mL per g, volume fractions of the
// box from 0 to 1, D/D0 relative to bulk water.
//
// The package prints nothing: Options.Progress reports progress, and
// errors are returned; bad input is a *configs.InputError.
package run

// Version is gelspace's version, recorded in every output it writes.
const Version = "0.1.0-dev"
