package percolation

import "fmt"

// Box gives the lattice dimensions in voxels and, per axis (x, y, z), whether
// the box is periodic. A voxel set or field over the box is a flat slice of
// length NX*NY*NZ in which the voxel at (x, y, z) sits at index
// x + NX*(y + NY*z): x is the fastest axis, as in voxel.Grid.
type Box struct {
	NX, NY, NZ int
	Periodic   [3]bool // per axis x, y, z: the face at 0 touches the face at N−1
}

// PeriodicBox returns a box that is periodic along all three axes, the
// boundary condition of the hydration engine.
func PeriodicBox(nx, ny, nz int) Box {
	return Box{NX: nx, NY: ny, NZ: nz, Periodic: [3]bool{true, true, true}}
}

// Len returns the number of voxels, NX*NY*NZ.
func (b Box) Len() int { return b.NX * b.NY * b.NZ }

// Index returns the offset of (x, y, z), which must lie inside the box.
func (b Box) Index(x, y, z int) int { return x + b.NX*(y+b.NY*z) }

// Coords is the inverse of Index.
func (b Box) Coords(i int) (x, y, z int) {
	x = i % b.NX
	i /= b.NX
	return x, i % b.NY, i / b.NY
}

func (b Box) dims() [3]int { return [3]int{b.NX, b.NY, b.NZ} }

// maxVoxels bounds a box so that voxel offsets and cluster labels fit int32.
const maxVoxels = 1 << 30

// mustFit panics unless the box is valid and n equals its voxel count; what
// names the slice for the message. Such a mismatch is a caller bug.
func (b Box) mustFit(n int, what string) {
	if b.NX < 1 || b.NY < 1 || b.NZ < 1 {
		panic(fmt.Sprintf("percolation: box %d×%d×%d: each edge must be at least 1 voxel", b.NX, b.NY, b.NZ))
	}
	if int64(b.NX)*int64(b.NY)*int64(b.NZ) > maxVoxels {
		panic(fmt.Sprintf("percolation: box %d×%d×%d has more than %d voxels", b.NX, b.NY, b.NZ, maxVoxels))
	}
	if n != b.Len() {
		panic(fmt.Sprintf("percolation: %s has length %d, box %d×%d×%d needs %d", what, n, b.NX, b.NY, b.NZ, b.Len()))
	}
}

var axisNames = [3]string{"x", "y", "z"}
