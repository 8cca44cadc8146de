package voxel

import (
	"fmt"

	"gelspace/kinetics"
)

// Grid is a periodic box of voxels.
//
// Phase holds one phase id per voxel; the voxel at (x, y, z) is
// Phase[x + NX*(y + NY*z)], so x is the fastest axis and the array read in
// order is C order with shape (z, y, x). Particle holds, for every voxel
// that belonged to a cement or filler grain in the packed box, that grain's
// identifier (1, 2, …), and 0 for the original water space. It is kept for
// the life of the paste: the engine uses it to tell inner from outer
// product, and percolation uses it to know which touching grains are not yet
// bonded.
type Grid struct {
	NX, NY, NZ int
	VoxelUM    float64 // voxel edge in µm
	Phase      []kinetics.ID
	Particle   []int32
}

// MaxVoxels bounds the box size gelspace will allocate (1024³).
const MaxVoxels = 1 << 30

// NewGrid returns a box of water of the given edge lengths in voxels.
func NewGrid(nx, ny, nz int, voxelUM float64) (*Grid, error) {
	if nx < 1 || ny < 1 || nz < 1 {
		return nil, fmt.Errorf("voxel: box %d×%d×%d: each edge must be at least 1 voxel", nx, ny, nz)
	}
	if nx > MaxVoxels || ny > MaxVoxels || nz > MaxVoxels || int64(nx)*int64(ny) > MaxVoxels {
		return nil, fmt.Errorf("voxel: box %d×%d×%d has more than the limit of %d voxels", nx, ny, nz, int64(MaxVoxels))
	}
	if n := int64(nx) * int64(ny) * int64(nz); n > MaxVoxels {
		return nil, fmt.Errorf("voxel: box %d×%d×%d has %d voxels, more than the limit %d", nx, ny, nz, n, int64(MaxVoxels))
	}
	if !(voxelUM > 0) {
		return nil, fmt.Errorf("voxel: voxel size %g µm must be > 0", voxelUM)
	}
	n := nx * ny * nz
	phase := make([]kinetics.ID, n)
	for i := range phase {
		phase[i] = kinetics.Water
	}
	return &Grid{NX: nx, NY: ny, NZ: nz, VoxelUM: voxelUM,
		Phase: phase, Particle: make([]int32, n)}, nil
}

// Len returns the number of voxels.
func (g *Grid) Len() int { return g.NX * g.NY * g.NZ }

// Index returns the offset of (x, y, z) in Phase and Particle. Coordinates
// must lie inside the box.
func (g *Grid) Index(x, y, z int) int { return x + g.NX*(y+g.NY*z) }

// Coords is the inverse of Index.
func (g *Grid) Coords(i int) (x, y, z int) {
	x = i % g.NX
	i /= g.NX
	return x, i % g.NY, i / g.NY
}

// Wrap returns the offset of (x, y, z) after periodic wrapping of each
// coordinate into the box.
func (g *Grid) Wrap(x, y, z int) int {
	x %= g.NX
	if x < 0 {
		x += g.NX
	}
	y %= g.NY
	if y < 0 {
		y += g.NY
	}
	z %= g.NZ
	if z < 0 {
		z += g.NZ
	}
	return g.Index(x, y, z)
}

// Neighbours writes the offsets of the six face neighbours of voxel i, with
// periodic wrapping, in the order −x, +x, −y, +y, −z, +z.
func (g *Grid) Neighbours(i int, nb *[6]int) {
	nx, ny, nz := g.NX, g.NY, g.NZ
	plane := nx * ny
	x := i % nx
	y := (i / nx) % ny
	z := i / plane
	if x == 0 {
		nb[0], nb[1] = i+nx-1, i+1
	} else if x == nx-1 {
		nb[0], nb[1] = i-1, i-nx+1
	} else {
		nb[0], nb[1] = i-1, i+1
	}
	if nx == 1 {
		nb[0], nb[1] = i, i
	}
	row := nx
	if y == 0 {
		nb[2], nb[3] = i+row*(ny-1), i+row
	} else if y == ny-1 {
		nb[2], nb[3] = i-row, i-row*(ny-1)
	} else {
		nb[2], nb[3] = i-row, i+row
	}
	if ny == 1 {
		nb[2], nb[3] = i, i
	}
	if z == 0 {
		nb[4], nb[5] = i+plane*(nz-1), i+plane
	} else if z == nz-1 {
		nb[4], nb[5] = i-plane, i-plane*(nz-1)
	} else {
		nb[4], nb[5] = i-plane, i+plane
	}
	if nz == 1 {
		nb[4], nb[5] = i, i
	}
}

// Count returns the number of voxels of each phase id.
func (g *Grid) Count() [kinetics.NumIDs]int {
	var c [kinetics.NumIDs]int
	for _, p := range g.Phase {
		c[p]++
	}
	return c
}

// Clone returns a deep copy.
func (g *Grid) Clone() *Grid {
	h := *g
	h.Phase = append([]kinetics.ID(nil), g.Phase...)
	h.Particle = append([]int32(nil), g.Particle...)
	return &h
}

// Step returns the offset of the face neighbour of voxel i in direction dir
// (0 −x, 1 +x, 2 −y, 3 +y, 4 −z, 5 +z), with periodic wrapping. It is the
// one-direction form of Neighbours, for random walks.
func (g *Grid) Step(i, dir int) int {
	nx, ny, nz := g.NX, g.NY, g.NZ
	switch dir {
	case 0:
		if i%nx == 0 {
			return i + nx - 1
		}
		return i - 1
	case 1:
		if i%nx == nx-1 {
			return i - nx + 1
		}
		return i + 1
	case 2:
		if (i/nx)%ny == 0 {
			return i + nx*(ny-1)
		}
		return i - nx
	case 3:
		if (i/nx)%ny == ny-1 {
			return i - nx*(ny-1)
		}
		return i + nx
	case 4:
		if i/(nx*ny) == 0 {
			return i + nx*ny*(nz-1)
		}
		return i - nx*ny
	case 5:
		if i/(nx*ny) == nz-1 {
			return i - nx*ny*(nz-1)
		}
		return i + nx*ny
	}
	panic("voxel: Step direction out of range 0–5")
}
