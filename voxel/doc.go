// Package voxel holds the periodic 3D lattice of gelspace, the particle size
// distribution and the packing of digitised particles, the discrete-event
// hydration engine, checkpoints, and volume files (VTK ImageData .vti and
// NumPy .npy).
package voxel
