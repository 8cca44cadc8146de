package percolation

import (
	"math"
	"testing"

	"gelspace/kinetics"
)

// reference64 is a naive double-precision solve of the same model, for
// the precision check: every voxel carries an unknown (insulating voxels
// and isolated clusters decouple, with zero right-hand side, and the
// Jacobi-preconditioned conjugate gradients never touch them), the
// conductances come from box coordinates, and D/D0 is the dissipation of
// the final potential summed bond by bond.
func reference64(box Box, phase []uint8, a int, tol float64) float64 {
	table := DefaultDiffusivities()
	n := box.Len()
	dims := box.dims()
	d := func(i int) float64 { return table[phase[i]] }
	// nb returns the neighbour of i one step along axis k and whether the
	// bond exists (not across an open face, not to itself).
	nb := func(i, k, step int) (int, bool) {
		x, y, z := box.Coords(i)
		c := [3]int{x, y, z}
		c[k] += step
		if c[k] < 0 || c[k] >= dims[k] {
			if !box.Periodic[k] {
				return 0, false
			}
			c[k] = (c[k] + dims[k]) % dims[k]
		}
		j := box.Index(c[0], c[1], c[2])
		return j, j != i
	}
	g := func(i, j int) float64 { return float64(hm(d(i), d(j))) }
	elec := !box.Periodic[a]
	coord := func(i int) int { x, y, z := box.Coords(i); return [3]int{x, y, z}[a] }
	ge := func(i int) (diag, src float64) {
		if !elec {
			return 0, 0
		}
		if coord(i) == 0 {
			diag, src = diag+2*d(i), src+d(i)
		}
		if coord(i) == dims[a]-1 {
			diag, src = diag+2*d(i), src-d(i)
		}
		return diag, src
	}
	apply := func(v, out []float64) {
		for i := range n {
			var s float64
			for k := range 3 {
				for _, st := range []int{1, -1} {
					if j, ok := nb(i, k, st); ok {
						s += g(i, j) * (v[i] - v[j])
					}
				}
			}
			e, _ := ge(i)
			out[i] = s + e*v[i]
		}
	}
	b := make([]float64, n)
	diag := make([]float64, n)
	for i := range n {
		if j, ok := nb(i, a, -1); ok {
			b[i] += g(i, j)
		} else if box.Periodic[a] && dims[a] == 1 {
			b[i] += g(i, i)
		}
		if j, ok := nb(i, a, 1); ok {
			b[i] -= g(i, j)
		} else if box.Periodic[a] && dims[a] == 1 {
			b[i] -= g(i, i)
		}
		_, src := ge(i)
		b[i] += src
		for k := range 3 {
			for _, st := range []int{1, -1} {
				if j, ok := nb(i, k, st); ok {
					diag[i] += g(i, j)
				}
			}
		}
		e, _ := ge(i)
		diag[i] += e
	}
	w, r, z, p, q := make([]float64, n), append([]float64(nil), b...), make([]float64, n), make([]float64, n), make([]float64, n)
	prec := func() float64 {
		var rz float64
		for i := range n {
			z[i] = 0
			if diag[i] > 0 {
				z[i] = r[i] / diag[i]
			}
			rz += r[i] * z[i]
		}
		return rz
	}
	var bb float64
	for _, v := range b {
		bb += v * v
	}
	rho := prec()
	copy(p, z)
	for it := 0; bb > 0 && it < 100000; it++ {
		apply(p, q)
		var pq float64
		for i := range n {
			pq += p[i] * q[i]
		}
		if !(pq > 0) {
			break
		}
		alpha := rho / pq
		var rr float64
		for i := range n {
			w[i] += alpha * p[i]
			r[i] -= alpha * q[i]
			rr += r[i] * r[i]
		}
		if math.Sqrt(rr/bb) <= tol {
			break
		}
		rz := prec()
		for i := range n {
			p[i] = z[i] + rz/rho*p[i]
		}
		rho = rz
	}
	// Dissipation of u = w − x_a, bond by bond (each bond once, from its
	// lower end along +k), plus the electrode links.
	var e float64
	for i := range n {
		for k := range 3 {
			if j, ok := nb(i, k, 1); ok {
				du := w[i] - w[j]
				if k == a {
					du++
				}
				e += g(i, j) * du * du
			} else if k == a && box.Periodic[a] && dims[a] == 1 {
				e += g(i, i)
			}
		}
		if elec {
			if coord(i) == 0 {
				du := w[i] - (0.5 - 0) // u_i = w_i − x_a against the electrode at +1/2
				e += 2 * d(i) * du * du
			}
			if coord(i) == dims[a]-1 {
				du := (w[i] - float64(dims[a]-1)) + float64(dims[a]) - 0.5
				e += 2 * d(i) * du * du
			}
		}
	}
	return e / float64(n)
}

// TestDiffusivityFloat64 checks that the solver, with its single-precision
// vectors, gives D/D0 within 1e-6 relative of the naive double-precision
// solve of reference64 (solved to 1e-12), solved to the floor tolerance,
// on random pastes, periodic and open, with odd edges and an axis one
// voxel long: the single-precision storage costs less than 1e-6. (At a
// looser tolerance the error of D/D0 is that of the tolerance, as for any
// solver; TestDiffusivityHydrated checks the run's default 1e-5 on a real
// paste.)
func TestDiffusivityFloat64(t *testing.T) {
	boxes := []Box{
		PeriodicBox(12, 10, 14),
		PeriodicBox(9, 11, 7),
		{NX: 11, NY: 10, NZ: 9},
		{NX: 20, NY: 18, NZ: 1, Periodic: [3]bool{true, false, true}},
	}
	var worst float64
	defer func() { t.Logf("largest relative difference %.2g", worst) }()
	for k, box := range boxes {
		phase := randomPaste(box, uint64(30+k), 0.4, 0.3)
		for a := range 3 {
			want := reference64(box, phase, a, 1e-12)
			for _, tol := range []float64{FloorTol} {
				res, err := Diffusivity(box, phase, DiffusivityOptions{Tol: tol})
				if err != nil {
					t.Fatal(err)
				}
				e := relErr(res.Rel[a], want)
				worst = max(worst, e)
				if e > 1e-6 {
					t.Errorf("box %+v axis %s tol %g: D/D0 %.12g, double precision %.12g (rel. error %.2g > 1e-6)", box, axisNames[a], tol, res.Rel[a], want, e)
				}
			}
		}
	}
	// The reference itself against an exact case: water/C-S-H layers in
	// series along z conduct as the harmonic mean.
	box := Box{NX: 3, NY: 2, NZ: 6}
	phase := waterPhases(box.Len())
	for i := range phase {
		if _, _, z := box.Coords(i); z%2 == 1 {
			phase[i] = kinetics.CSHOuter
		}
	}
	harm := 1 / (0.5 + 0.5/CSHRelDiffusivity)
	if got := reference64(box, phase, 2, 1e-13); relErr(got, harm) > exactTol {
		t.Errorf("reference64 layers: %.12g, want %.12g", got, harm)
	}
}
