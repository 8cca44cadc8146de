package render

import (
	"fmt"
	"math"
)

// Volume is a box of phase ids. Phase[x + NX*(y + NY*z)] is the voxel at
// (x, y, z), as in voxel.Grid: x is the fastest axis.
type Volume struct {
	Phase      []uint8
	NX, NY, NZ int
	VoxelUM    float64 // voxel edge in µm
}

// check returns an error for bad dimensions or voxel size and panics when
// the slice length does not match the dimensions (a caller bug).
func (v *Volume) check() error {
	if v.NX < 1 || v.NY < 1 || v.NZ < 1 {
		return fmt.Errorf("render: box %d×%d×%d: each edge must be at least 1 voxel", v.NX, v.NY, v.NZ)
	}
	if !(v.VoxelUM > 0) || math.IsInf(v.VoxelUM, 0) {
		return fmt.Errorf("render: voxel size %g µm must be finite and > 0", v.VoxelUM)
	}
	if n := v.NX * v.NY * v.NZ; len(v.Phase) != n {
		panic(fmt.Sprintf("render: %d phase values for a %d×%d×%d box (%d voxels)", len(v.Phase), v.NX, v.NY, v.NZ, n))
	}
	return nil
}

// Plane names a family of slices by the two axes it contains.
type Plane uint8

const (
	PlaneXY Plane = iota // normal z; image axes x (right), y (up)
	PlaneXZ              // normal y; image axes x (right), z (up)
	PlaneYZ              // normal x; image axes y (right), z (up)
)

var planeNames = [...]string{"xy", "xz", "yz"}

// String returns "xy", "xz" or "yz".
func (p Plane) String() string {
	if int(p) < len(planeNames) {
		return planeNames[p]
	}
	return fmt.Sprintf("Plane(%d)", uint8(p))
}

// axes returns the names of the horizontal, vertical and normal axes.
func (p Plane) axes() (h, v, n string) {
	switch p {
	case PlaneXY:
		return "x", "y", "z"
	case PlaneXZ:
		return "x", "z", "y"
	case PlaneYZ:
		return "y", "z", "x"
	}
	panic(fmt.Sprintf("render: unknown plane %d", uint8(p)))
}

// PlaneSize returns the width, height (in voxels) and the number of
// positions along the normal of a plane of the box.
func (v *Volume) PlaneSize(p Plane) (w, h, n int) {
	switch p {
	case PlaneXY:
		return v.NX, v.NY, v.NZ
	case PlaneXZ:
		return v.NX, v.NZ, v.NY
	case PlaneYZ:
		return v.NY, v.NZ, v.NX
	}
	panic(fmt.Sprintf("render: unknown plane %d", uint8(p)))
}

// Extract returns the phases of the slice at position pos (in voxels along
// the normal, 0 ≤ pos < n) as a w×h array indexed u + w*t, u along the
// horizontal image axis and t along the vertical one (t = 0 at the bottom).
func (v *Volume) Extract(p Plane, pos int) (data []uint8, w, h int, err error) {
	if err := v.check(); err != nil {
		return nil, 0, 0, err
	}
	w, h, n := v.PlaneSize(p)
	if pos < 0 || pos >= n {
		_, _, an := p.axes()
		return nil, 0, 0, fmt.Errorf("render: %s slice at %s = %d: position must be in 0..%d", p, an, pos, n-1)
	}
	data = make([]uint8, w*h)
	nx, nxy := v.NX, v.NX*v.NY
	switch p {
	case PlaneXY:
		copy(data, v.Phase[pos*nxy:(pos+1)*nxy])
	case PlaneXZ:
		for z := 0; z < h; z++ {
			copy(data[z*w:(z+1)*w], v.Phase[z*nxy+pos*nx:z*nxy+pos*nx+nx])
		}
	case PlaneYZ:
		for z := 0; z < h; z++ {
			row, base := data[z*w:(z+1)*w], z*nxy+pos
			for y := range row {
				row[y] = v.Phase[base+y*nx]
			}
		}
	}
	return data, w, h, nil
}
