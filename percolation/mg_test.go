package percolation

import (
	"math"
	"math/rand/v2"
	"testing"
)

// mgBoxes are small boxes above mgCoarsestLen voxels: even (a proper
// red–black colouring, parallel half sweeps), odd and periodic (ordered
// half sweeps), and open with electrodes.
var mgBoxes = []Box{
	PeriodicBox(10, 8, 12),
	PeriodicBox(9, 8, 11),
	{NX: 11, NY: 10, NZ: 7},
}

// solvedSolver solves box once and returns the solver, which keeps the
// multigrid levels of its last axis.
func solvedSolver(t *testing.T, box Box, seed uint64, workers int) *Solver {
	t.Helper()
	s := new(Solver)
	if _, err := s.Diffusivity(box, randomPaste(box, seed, 0.4, 0.3), DiffusivityOptions{Workers: workers}); err != nil {
		t.Fatal(err)
	}
	if len(s.mg) == 0 {
		t.Fatalf("box %+v: no coarse levels", box)
	}
	return s
}

// precond returns M u by one V-cycle.
func (s *Solver) precondOf(u []float64) []float64 {
	copy(s.r, u)
	s.mgPrecond(false)
	return append([]float64(nil), s.z...)
}

func dot(a, b []float64) float64 {
	var v float64
	for i := range a {
		v += a[i] * b[i]
	}
	return v
}

// TestMGSymmetric checks that the V-cycle is a symmetric positive definite
// operator on the active set, u·Mv = v·Mu and u·Mu > 0, for random u, v,
// to rounding (1e-12 relative), the condition for conjugate gradients.
func TestMGSymmetric(t *testing.T) {
	for k, box := range mgBoxes {
		s := solvedSolver(t, box, uint64(k), 2)
		rng := rand.New(rand.NewPCG(uint64(k), 3))
		vec := func() []float64 {
			u := make([]float64, box.Len())
			for i := range u {
				if s.invd[i] != 0 {
					u[i] = rng.NormFloat64()
				}
			}
			return u
		}
		for range 4 {
			u, v := vec(), vec()
			mu, mv := s.precondOf(u), s.precondOf(v)
			a, b := dot(u, mv), dot(v, mu)
			scale := math.Sqrt(dot(u, mu) * dot(v, mv))
			if !(dot(u, mu) > 0) || math.Abs(a-b) > 1e-12*scale {
				t.Errorf("box %+v: u·Mv %.15g, v·Mu %.15g, u·Mu %g", box, a, b, dot(u, mu))
			}
		}
	}
}

// TestMGSweepNaive checks the parallel red–black half sweep against the
// ordered point-by-point sweep: on a properly coloured level the voxels of
// one colour do not touch, so both must agree exactly.
func TestMGSweepNaive(t *testing.T) {
	box := mgBoxes[0]
	s := solvedSolver(t, box, 7, 3)
	rng := rand.New(rand.NewPCG(8, 9))
	n := box.Len()
	x0, f := make([]float64, n), make([]float64, n)
	for i := range x0 {
		if s.invd[i] != 0 {
			x0[i], f[i] = rng.NormFloat64(), rng.NormFloat64()
		}
	}
	for c := range 2 {
		fast, slow := append([]float64(nil), x0...), append([]float64(nil), x0...)
		s.fine.sweep(fast, f, c, false, 0, 5, nil)
		s.fine.sweep(fast, f, c, false, 5, box.NZ, nil)
		s.fine.sweepOrdered(slow, f, c, c == 1, nil)
		for i := range fast {
			if fast[i] != slow[i] {
				t.Fatalf("colour %d voxel %d: sweep %v, ordered %v", c, i, fast[i], slow[i])
			}
		}
	}
}

// TestMGGalerkin checks the first coarse level against a naive dense
// Pᵀ A P, with A built from the fine conductances and P the
// piecewise-constant interpolation of the aggregates, and that every
// aggregate is connected and lies in one 2×2×2 block. Conductances are
// summed in single precision on the coarse level, hence the tolerance.
func TestMGGalerkin(t *testing.T) {
	for k, box := range mgBoxes {
		s := solvedSolver(t, box, uint64(10+k), 1)
		n, c := box.Len(), &s.mg[0]
		A := make([][]float64, n)
		for i := range A {
			A[i] = make([]float64, n)
		}
		for i := range n {
			x, y, z := box.Coords(i)
			if s.invd[i] == 0 {
				continue
			}
			A[i][i] += s.dg[i]
			nb := [3]int{box.Index((x+1)%box.NX, y, z), box.Index(x, (y+1)%box.NY, z), box.Index(x, y, (z+1)%box.NZ)}
			for a, j := range nb {
				g := float64(s.g[a][i])
				A[i][j] -= g
				A[j][i] -= g
			}
		}
		Ac := make([][]float64, c.n)
		for I := range Ac {
			Ac[I] = make([]float64, c.n)
		}
		var scale float64
		for i := range n {
			for j := range n {
				if s.agg[i] >= 0 && s.agg[j] >= 0 {
					Ac[s.agg[i]][s.agg[j]] += A[i][j]
				}
			}
			scale = max(scale, math.Abs(A[i][i]))
		}
		got := make([][]float64, c.n)
		for I := range got {
			got[I] = make([]float64, c.n)
			got[I][I] = c.diag[I]
			for e := c.ptr[I]; e < c.ptr[I+1]; e++ {
				got[I][c.col[e]] -= float64(c.val[e])
			}
		}
		for I := range c.n {
			for J := range c.n {
				if math.Abs(got[I][J]-Ac[I][J]) > 1e-6*scale {
					t.Fatalf("box %+v: coarse entry (%d, %d) = %g, naive Pᵀ A P %g", box, I, J, got[I][J], Ac[I][J])
				}
			}
		}
		// Aggregates: one block each, connected by bonds inside it.
		members := make([][]int, c.n)
		for i, I := range s.agg {
			if I >= 0 {
				members[I] = append(members[I], i)
			}
		}
		for I, m := range members {
			x0, y0, z0 := box.Coords(m[0])
			seen := map[int]bool{m[0]: true}
			for grew := true; grew; {
				grew = false
				for _, i := range m {
					x, y, z := box.Coords(i)
					if x/2 != x0/2 || y/2 != y0/2 || z/2 != z0/2 {
						t.Fatalf("box %+v: aggregate %d spans blocks", box, I)
					}
					for _, j := range m {
						if !seen[j] && seen[i] && A[i][j] < 0 {
							seen[j], grew = true, true
						}
					}
				}
			}
			if len(seen) != len(m) {
				t.Fatalf("box %+v: aggregate %d of %d voxels is not connected", box, I, len(m))
			}
		}
	}
}
