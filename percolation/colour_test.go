package percolation

import (
	"math/rand/v2"
	"testing"
)

// TestColourListNaive checks the compacted colour-list kernels of a
// properly coloured fine level for exact equality against naive versions:
// the lists hold exactly the active voxels of each colour; sweepList over
// split plane ranges equals the ordered point-by-point sweep; restrictList
// equals a residual formed voxel by voxel from box coordinates and added to
// the aggregates in raster order; prolongList equals adding the coarse
// value to each active voxel of the colour.
func TestColourListNaive(t *testing.T) {
	box := mgBoxes[0]
	s := solvedSolver(t, box, 21, 2)
	if !s.fine.coloured() {
		t.Fatalf("box %+v: colouring not proper", box)
	}
	n := box.Len()
	rng := rand.New(rand.NewPCG(22, 23))
	x0, f := make([]float64, n), make([]float64, n)
	for i := range x0 {
		if s.invd[i] != 0 {
			x0[i], f[i] = rng.NormFloat64(), rng.NormFloat64()
		}
	}
	for c := range 2 {
		// Membership, in raster order.
		var want []int
		for i := range n {
			x, y, z := box.Coords(i)
			if (x+y+z)&1 == c && s.dg[i] != 0 {
				want = append(want, i)
			}
		}
		l := &s.col[c]
		var got []int
		for r := range box.NY * box.NZ {
			for _, e := range l.ent[l.ptr[r]:l.ptr[r+1]] {
				got = append(got, int(e.x)+box.NX*r)
			}
		}
		if len(got) != len(want) {
			t.Fatalf("colour %d: %d entries, want %d", c, len(got), len(want))
		}
		for k := range got {
			if got[k] != want[k] {
				t.Fatalf("colour %d entry %d: voxel %d, want %d", c, k, got[k], want[k])
			}
		}

		// Half sweep.
		fast, slow := append([]float64(nil), x0...), append([]float64(nil), x0...)
		s.fine.sweepList(l, fast, f, 0, 5, nil)
		s.fine.sweepList(l, fast, f, 5, box.NZ, nil)
		s.fine.sweepOrdered(slow, f, c, c == 1, nil)
		for i := range fast {
			if fast[i] != slow[i] {
				t.Fatalf("colour %d voxel %d: sweepList %v, ordered %v", c, i, fast[i], slow[i])
			}
		}

		// Restriction of the residual on colour c.
		nc := s.mg[0].n
		cfFast, cfSlow := make([]float64, nc), make([]float64, nc)
		s.fine.restrictList(l, x0, f, cfFast, 0, 4)
		s.fine.restrictList(l, x0, f, cfFast, 4, box.NZ)
		for _, i := range want {
			x, y, z := box.Coords(i)
			at := func(dx, dy, dz int) int {
				return box.Index((x+dx+box.NX)%box.NX, (y+dy+box.NY)%box.NY, (z+dz+box.NZ)%box.NZ)
			}
			v := f[i] - s.dg[i]*x0[i] + float64(s.g[0][i])*x0[at(1, 0, 0)] + float64(s.g[0][at(-1, 0, 0)])*x0[at(-1, 0, 0)] +
				float64(s.g[1][i])*x0[at(0, 1, 0)] + float64(s.g[1][at(0, -1, 0)])*x0[at(0, -1, 0)] +
				float64(s.g[2][i])*x0[at(0, 0, 1)] + float64(s.g[2][at(0, 0, -1)])*x0[at(0, 0, -1)]
			cfSlow[s.agg[i]] += v
		}
		for I := range cfFast {
			if cfFast[I] != cfSlow[I] {
				t.Fatalf("colour %d aggregate %d: restrictList %v, naive %v", c, I, cfFast[I], cfSlow[I])
			}
		}

		// Prolongation on colour c.
		cx := make([]float64, nc)
		for I := range cx {
			cx[I] = rng.NormFloat64()
		}
		pFast, pSlow := append([]float64(nil), x0...), append([]float64(nil), x0...)
		s.fine.prolongList(l, pFast, cx, 0, box.NZ)
		for _, i := range want {
			pSlow[i] += cx[s.agg[i]]
		}
		for i := range pFast {
			if pFast[i] != pSlow[i] {
				t.Fatalf("colour %d voxel %d: prolongList %v, naive %v", c, i, pFast[i], pSlow[i])
			}
		}
	}
}
