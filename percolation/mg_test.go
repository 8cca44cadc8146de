package percolation

import (
	"math"
	"math/rand/v2"
	"testing"
)

// mgBoxes are small boxes above mgCoarsestLen voxels: even (a proper
// red–black colouring, parallel half sweeps), odd and periodic (ordered
// half sweeps), open with electrodes, and odd along open axes only
// (properly coloured).
var mgBoxes = []Box{
	PeriodicBox(10, 8, 12),
	PeriodicBox(9, 8, 11),
	{NX: 11, NY: 10, NZ: 7},
	{NX: 30, NY: 25, NZ: 1, Periodic: [3]bool{true, false, true}},
}

// solvedSolver solves box once and returns the solver, which keeps the
// multigrid levels and the vectors of its last axis.
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

// naiveG returns the conductance of the bond from voxel (x, y, z) to its
// neighbour one step along axis a (step ±1), from box coordinates: the
// harmonic mean of the two diffusivities, 0 across an open face and for a
// bond from a voxel to itself.
func (s *Solver) naiveG(x, y, z, a, step int) float64 {
	c := [3]int{x, y, z}
	dims := s.box.dims()
	if dims[a] == 1 {
		return 0
	}
	c[a] += step
	if c[a] < 0 || c[a] >= dims[a] {
		if !s.box.Periodic[a] {
			return 0
		}
		c[a] = (c[a] + dims[a]) % dims[a]
	}
	i, j := s.box.Index(x, y, z), s.box.Index(c[0], c[1], c[2])
	return float64(hm(s.dtab[s.cls[i]], s.dtab[s.cls[j]]))
}

// naiveNeighbour returns the index of the neighbour of i one step along a,
// wrapping.
func (s *Solver) naiveNeighbour(i, a, step int) int {
	x, y, z := s.box.Coords(i)
	c := [3]int{x, y, z}
	n := s.box.dims()[a]
	c[a] = (c[a] + step + n) % n
	return s.box.Index(c[0], c[1], c[2])
}

// naiveSum returns A_ii and Σ_j g_ij v_j for voxel i, summed in the pairs
// of gather.
func (s *Solver) naiveSum(v []float32, i int) (dg, sum float64) {
	x, y, z := s.box.Coords(i)
	var g [6]float64
	var vn [6]float64
	for a := range 3 {
		for k, step := range [2]int{1, -1} {
			g[2*a+k] = s.naiveG(x, y, z, a, step)
			vn[2*a+k] = float64(v[s.naiveNeighbour(i, a, step)])
		}
	}
	dg = (g[0] + g[1]) + (g[2] + g[3]) + (g[4] + g[5])
	if s.elec >= 0 {
		ca := [3]int{x, y, z}[s.elec]
		n := s.box.dims()[s.elec]
		d := s.dtab[s.cls[i]]
		var ge float64 // the electrode links, summed first
		if ca == 0 {
			ge += 2 * d
		}
		if ca == n-1 {
			ge += 2 * d
		}
		dg += ge
	}
	sum = (g[0]*vn[0] + g[1]*vn[1]) + (g[2]*vn[2] + g[3]*vn[3]) + (g[4]*vn[4] + g[5]*vn[5])
	return dg, sum
}

// naiveSum32 is naiveSum in single precision, as the iteration's kernels
// compute it: the diagonal part as the sum of g_ij (v_i − v_j) and the
// electrode term, and the Gauss–Seidel sum Σ_j g_ij v_j, both in the pairs
// of gather.
func (s *Solver) naiveSum32(v []float32, i int) (av, sum float32) {
	x, y, z := s.box.Coords(i)
	var g, vn [6]float32
	for a := range 3 {
		for k, step := range [2]int{1, -1} {
			g[2*a+k] = float32(s.naiveG(x, y, z, a, step))
			vn[2*a+k] = v[s.naiveNeighbour(i, a, step)]
		}
	}
	vi := v[i]
	av = (g[0]*(vi-vn[0]) + g[1]*(vi-vn[1])) + (g[2]*(vi-vn[2]) + g[3]*(vi-vn[3])) + (g[4]*(vi-vn[4]) + g[5]*(vi-vn[5]))
	if s.elec >= 0 {
		ca := [3]int{x, y, z}[s.elec]
		n := s.box.dims()[s.elec]
		d := s.dtab[s.cls[i]]
		var ge float64
		if ca == 0 {
			ge += 2 * d
		}
		if ca == n-1 {
			ge += 2 * d
		}
		if ge != 0 {
			av += float32(ge) * vi
		}
	}
	sum = (g[0]*vn[0] + g[1]*vn[1]) + (g[2]*vn[2] + g[3]*vn[3]) + (g[4]*vn[4] + g[5]*vn[5])
	return av, sum
}

func randomVec(rng *rand.Rand, s *Solver) []float32 {
	u := make([]float32, s.box.Len())
	for i := range u {
		if s.minv(i) != 0 {
			u[i] = float32(rng.NormFloat64())
		}
	}
	return u
}

// TestGatherNaive checks the row kernel of every operator application
// against the conductances and the diagonal formed voxel by voxel from box
// coordinates, bit for bit, for every box and both electrode settings.
func TestGatherNaive(t *testing.T) {
	for k, box := range append(mgBoxes, Box{NX: 1, NY: 6, NZ: 5}, PeriodicBox(2, 3, 5)) {
		s := new(Solver)
		if _, err := s.Diffusivity(box, randomPaste(box, uint64(k), 0.4, 0.3), DiffusivityOptions{}); err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(uint64(k), 1))
		v := make([]float32, box.Len())
		for i := range v {
			v[i] = float32(rng.NormFloat64())
		}
		for _, elec := range []int{-1, 0, 1, 2} {
			if elec >= 0 && box.Periodic[elec] {
				continue
			}
			s.elec = elec
			sum, dg := make([]float64, box.NX), make([]float64, box.NX)
			for z := range box.NZ {
				for y := range box.NY {
					for _, step := range []int{1, 2} {
						for x0 := range step {
							clear(sum)
							clear(dg)
							s.gather(v, y, z, x0, step, sum, dg)
							for x := x0; x < box.NX; x += step {
								wd, ws := s.naiveSum(v, box.Index(x, y, z))
								if dg[x] != wd || sum[x] != ws {
									t.Fatalf("box %+v elec %d voxel (%d, %d, %d): gather %v %v, naive %v %v", box, elec, x, y, z, dg[x], sum[x], wd, ws)
								}
							}
						}
					}
				}
			}
		}
	}
}

// TestApplyRowNaive checks the single-precision operator row kernel of
// the iteration (the matrix product and the fine residual) against the
// operator formed voxel by voxel from box coordinates, bit for bit, for
// every box, both electrode settings and both strides.
func TestApplyRowNaive(t *testing.T) {
	for k, box := range append(mgBoxes, Box{NX: 1, NY: 6, NZ: 5}, PeriodicBox(2, 3, 5), Box{NX: 2, NY: 1, NZ: 3}) {
		s := new(Solver)
		if _, err := s.Diffusivity(box, randomPaste(box, uint64(k), 0.4, 0.3), DiffusivityOptions{}); err != nil {
			t.Fatal(err)
		}
		rng := rand.New(rand.NewPCG(uint64(k), 5))
		v := make([]float32, box.Len())
		for i := range v {
			v[i] = float32(rng.NormFloat64())
		}
		out := make([]float32, box.NX)
		for _, elec := range []int{-1, 0, 1, 2} {
			if elec >= 0 && box.Periodic[elec] {
				continue
			}
			s.elec = elec
			for z := range box.NZ {
				for y := range box.NY {
					for _, step := range []int{1, 2} {
						for x0 := range step {
							for i := range out {
								out[i] = float32(math.NaN())
							}
							s.applyRow(v, out, y, z, x0, step)
							for x := range box.NX {
								want, _ := s.naiveSum32(v, box.Index(x, y, z))
								if (x-x0)%step != 0 || x < x0 {
									if !math.IsNaN(float64(out[x])) {
										t.Fatalf("box %+v elec %d step %d x0 %d: voxel (%d, %d, %d) written", box, elec, step, x0, x, y, z)
									}
									continue
								}
								if out[x] != want {
									t.Fatalf("box %+v elec %d step %d voxel (%d, %d, %d): applyRow %v, naive %v", box, elec, step, x, y, z, out[x], want)
								}
							}
						}
					}
				}
			}
		}
	}
}

// TestMGSweepNaive checks the fine half sweeps (parallel over split plane
// ranges on a properly coloured level, ordered on one worker otherwise,
// forward and reverse) against the point-by-point Gauss–Seidel sweep in
// raster order (or its reverse) from box coordinates in single precision,
// bit for bit.
func TestMGSweepNaive(t *testing.T) {
	for k, box := range mgBoxes {
		s := solvedSolver(t, box, uint64(7+k), 3)
		rng := rand.New(rand.NewPCG(8, uint64(k)))
		x0, f := randomVec(rng, s), randomVec(rng, s)
		for c := range 2 {
			for _, reverse := range []bool{false, true} {
				fast, slow := append([]float32(nil), x0...), append([]float32(nil), x0...)
				if s.coloured() {
					mid := box.NZ / 2
					s.sweep(fast, f, c, false, reverse, 0, mid)
					s.sweep(fast, f, c, false, reverse, mid, box.NZ)
				} else {
					s.sweep(fast, f, c, false, reverse, 0, box.NZ)
				}
				n := box.Len()
				for k := range n {
					i := k
					if reverse {
						i = n - 1 - k
					}
					x, y, z := box.Coords(i)
					if (x+y+z)&1 != c || s.minv(i) == 0 {
						continue
					}
					_, sm := s.naiveSum32(slow, i)
					slow[i] = (f[i] + sm) * s.minv(i)
				}
				for i := range fast {
					if fast[i] != slow[i] {
						t.Fatalf("box %+v colour %d reverse %v voxel %d: sweep %v, naive %v", box, c, reverse, i, fast[i], slow[i])
					}
				}
			}
		}
	}
}

// precondOf returns M u by one V-cycle.
func (s *Solver) precondOf(u []float32) []float32 {
	copy(s.r, u)
	s.mgPrecond(false)
	return append([]float32(nil), s.z...)
}

func dot32(a, b []float32) float64 {
	var v float64
	for i := range a {
		v += float64(a[i]) * float64(b[i])
	}
	return v
}

// TestMGSymmetric checks that the V-cycle is a symmetric positive definite
// operator on the active set, u·Mv = v·Mu and u·Mu > 0, for random u, v,
// to the rounding of single-precision vectors (1e-5 relative), the
// condition for conjugate gradients.
func TestMGSymmetric(t *testing.T) {
	for k, box := range mgBoxes {
		checkSymmetric(t, solvedSolver(t, box, uint64(k), 2), uint64(k))
	}
}

// checkSymmetric checks u·Mv = v·Mu and u·Mu > 0 for random u, v and the
// preconditioner M of s.
func checkSymmetric(t *testing.T, s *Solver, seed uint64) {
	t.Helper()
	rng := rand.New(rand.NewPCG(seed, 3))
	for range 4 {
		u, v := randomVec(rng, s), randomVec(rng, s)
		mu, mv := s.precondOf(u), s.precondOf(v)
		a, b := dot32(u, mv), dot32(v, mu)
		scale := math.Sqrt(dot32(u, mu) * dot32(v, mv))
		if !(dot32(u, mu) > 0) || math.Abs(a-b) > 1e-5*scale {
			t.Errorf("box %+v: u·Mv %.15g, v·Mu %.15g, u·Mu %g", s.box, a, b, dot32(u, mu))
		}
	}
}

// TestMGSlabs checks, on boxes large enough for the coarse levels to be
// swept by slabs (one with an odd number of planes, so a short last slab
// pair and an odd periodic edge), that the levels have slabs, that the
// cycle stays symmetric and positive, and that D/D0 and the iterations are
// the same, bit for bit, on 1, 2 and 5 workers.
func TestMGSlabs(t *testing.T) {
	if testing.Short() {
		t.Skip("40³ solves")
	}
	for k, box := range []Box{PeriodicBox(40, 36, 44), PeriodicBox(36, 40, 45)} {
		phase := randomPaste(box, uint64(30+k), 0.4, 0.3)
		var want Diffusion
		for j, w := range []int{1, 2, 5} {
			s := new(Solver)
			got, err := s.Diffusivity(box, phase, DiffusivityOptions{Workers: w})
			if err != nil {
				t.Fatal(err)
			}
			if j == 0 {
				want = got
				if len(s.mg) == 0 || s.mg[0].slab == nil {
					t.Fatalf("box %+v: first coarse level (%d nodes) has no slabs", box, s.mg[0].n)
				}
				checkSymmetric(t, s, uint64(k))
				continue
			}
			if got != want {
				t.Errorf("box %+v, %d workers: %+v, want %+v", box, w, got, want)
			}
		}
	}
}

// aggMap returns the aggregate on coarse level 0 of each voxel, −1 off
// the active set, from the aggregate codes, and checks their numbering:
// block by block in raster order of the block grid, consecutive within a
// block.
func (s *Solver) aggMap(t *testing.T) []int32 {
	t.Helper()
	box := s.box
	agg := make([]int32, box.Len())
	bdims := [3]int{(box.NX + 1) / 2, (box.NY + 1) / 2, (box.NZ + 1) / 2}
	lo := make([]int32, len(s.bfirst)) // per block: smallest and largest aggregate
	hi := make([]int32, len(s.bfirst))
	for b := range lo {
		lo[b], hi[b] = math.MaxInt32, -1
	}
	for i := range agg {
		x, y, z := box.Coords(i)
		agg[i] = s.aggOf(x, y, z)
		if agg[i] >= 0 {
			b := x/2 + bdims[0]*(y/2+bdims[1]*(z/2))
			lo[b], hi[b] = min(lo[b], agg[i]), max(hi[b], agg[i])
		}
	}
	next := int32(0)
	for b := range lo {
		if hi[b] < 0 {
			continue
		}
		if lo[b] != next || lo[b] != s.bfirst[b] {
			t.Fatalf("block %d: aggregates from %d (first %d), want %d", b, lo[b], s.bfirst[b], next)
		}
		next = hi[b] + 1
	}
	if int(next) != s.mg[0].n {
		t.Fatalf("%d aggregates numbered, level 0 has %d", next, s.mg[0].n)
	}
	return agg
}

// TestMGGalerkin checks the first coarse level against a naive dense
// Pᵀ A P, with A built from the naive conductances and P the
// piecewise-constant interpolation of the aggregates, and that every
// aggregate is connected and lies in one 2×2×2 block. Conductances are
// summed in single precision on the coarse level, hence the tolerance.
func TestMGGalerkin(t *testing.T) {
	for k, box := range mgBoxes {
		s := solvedSolver(t, box, uint64(10+k), 1)
		n, c := box.Len(), &s.mg[0]
		agg := s.aggMap(t)
		A := make([][]float64, n)
		for i := range A {
			A[i] = make([]float64, n)
		}
		zero := make([]float32, n)
		for i := range n {
			if s.minv(i) == 0 {
				continue
			}
			x, y, z := box.Coords(i)
			A[i][i], _ = s.naiveSum(zero, i)
			for a := range 3 {
				for _, step := range []int{1, -1} {
					A[i][s.naiveNeighbour(i, a, step)] -= s.naiveG(x, y, z, a, step)
				}
			}
		}
		Ac := make([][]float64, c.n)
		for I := range Ac {
			Ac[I] = make([]float64, c.n)
		}
		var scale float64
		for i := range n {
			for j := range n {
				if agg[i] >= 0 && agg[j] >= 0 {
					Ac[agg[i]][agg[j]] += A[i][j]
				}
			}
			scale = max(scale, math.Abs(A[i][i]))
		}
		got := make([][]float64, c.n)
		for I := range got {
			got[I] = make([]float64, c.n)
			if c.invd[I] != 0 {
				got[I][I] = 1 / float64(c.invd[I]) // the diagonal is kept as its inverse
			}
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
		for i, I := range agg {
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

// TestMGCoarseGalerkin checks each coarse level below the first against a
// naive dense Pᵀ A P of the level above it, P the piecewise-constant
// interpolation of its aggregates with the nodes left out (agg −1) given
// no coarse value, on boxes where some nodes are left out.
func TestMGCoarseGalerkin(t *testing.T) {
	boxes := append(mgBoxes, PeriodicBox(24, 20, 22))
	dropped := 0
	for k, box := range boxes {
		s := new(Solver)
		if _, err := s.Diffusivity(box, randomPaste(box, uint64(20+k), 0.35, 0.35), DiffusivityOptions{Workers: 1}); err != nil {
			t.Fatal(err)
		}
		for l := 0; l+1 < len(s.mg); l++ {
			c, nx := &s.mg[l], &s.mg[l+1]
			dense := func(c *gLevel) [][]float64 {
				A := make([][]float64, c.n)
				for I := range A {
					A[I] = make([]float64, c.n)
					if c.invd[I] != 0 {
						A[I][I] = 1 / float64(c.invd[I])
					}
					for e := c.ptr[I]; e < c.ptr[I+1]; e++ {
						A[I][c.col[e]] -= float64(c.val[e])
					}
				}
				return A
			}
			A, got := dense(c), dense(nx)
			want := make([][]float64, nx.n)
			for I := range want {
				want[I] = make([]float64, nx.n)
			}
			var scale float64
			for I := range c.n {
				scale = max(scale, math.Abs(A[I][I]))
				if c.agg[I] < 0 {
					dropped++
					continue
				}
				for J := range c.n {
					if c.agg[J] >= 0 {
						want[c.agg[I]][c.agg[J]] += A[I][J]
					}
				}
			}
			for I := range nx.n {
				for J := range nx.n {
					if math.Abs(got[I][J]-want[I][J]) > 1e-5*scale {
						t.Fatalf("box %+v level %d: entry (%d, %d) = %g, naive Pᵀ A P %g", box, l+1, I, J, got[I][J], want[I][J])
					}
				}
			}
		}
	}
	if dropped == 0 {
		t.Fatal("no coarse node was left out of its next level: the case is not exercised")
	}
	t.Logf("%d coarse nodes left out", dropped)
}
