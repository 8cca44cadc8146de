package percolation

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"gelspace/kinetics"
)

// exactTol is the relative tolerance of the exact layered cases. The solve
// stops at a relative residual of 1e-10, and conductances are stored in
// single precision (relative rounding 6e-8).
const exactTol = 1e-6

// waterPhases returns n voxels of capillary water.
func waterPhases(n int) []uint8 {
	p := make([]uint8, n)
	for i := range p {
		p[i] = kinetics.Water
	}
	return p
}

func relErr(got, want float64) float64 {
	if want == 0 {
		return math.Abs(got)
	}
	return math.Abs(got-want) / math.Abs(want)
}

// layers returns a field whose diffusivity depends on z only, cycling
// through vals, and the arithmetic and harmonic means over the NZ layers.
func layers(box Box, vals []float64) (d []float64, arith, harm float64) {
	d = make([]float64, box.Len())
	var inv float64
	for z := range box.NZ {
		v := vals[z%len(vals)]
		arith += v
		if v == 0 {
			inv = math.Inf(1)
		} else {
			inv += 1 / v
		}
		for i := z * box.NX * box.NY; i < (z+1)*box.NX*box.NY; i++ {
			d[i] = v
		}
	}
	arith /= float64(box.NZ)
	harm = float64(box.NZ) / inv
	return d, arith, harm
}

// TestDiffusivityLayers checks the exact cases of layered media (an exact
// textbook result): layers parallel to the field conduct as the arithmetic
// mean of the layer diffusivities, layers in series as the harmonic mean.
// Both boundary modes are checked: periodic along z, and open along z
// with electrodes on the z faces.
func TestDiffusivityLayers(t *testing.T) {
	vals := []float64{1, CSHRelDiffusivity, 0.3, 1, 0.05, 2.5, 1e-3}
	for _, periodic := range []bool{true, false} {
		box := Box{NX: 5, NY: 4, NZ: 7, Periodic: [3]bool{true, !periodic, periodic}}
		d, arith, harm := layers(box, vals)
		res, err := DiffusivityField(box, d, DiffusivityOptions{Tol: 1e-10})
		if err != nil {
			t.Fatal(err)
		}
		for a, want := range [3]float64{arith, arith, harm} {
			if e := relErr(res.Rel[a], want); e > exactTol {
				t.Errorf("periodic z %v, axis %s: D/D0 = %.9g, want %.9g (rel. error %.2g)", periodic, axisNames[a], res.Rel[a], want, e)
			}
			if f := res.Formation[a]; relErr(f, 1/want) > exactTol {
				t.Errorf("periodic z %v, axis %s: formation factor %g, want %g", periodic, axisNames[a], f, 1/want)
			}
		}
	}
	// A random diffusivity per layer, many layers, with the phase table:
	// water and C-S-H layers.
	box := PeriodicBox(3, 3, 24)
	phase := waterPhases(box.Len())
	rng := rand.New(rand.NewPCG(5, 6))
	var nw int
	for z := range box.NZ {
		id := kinetics.ID(kinetics.CSHOuter)
		if rng.IntN(2) == 0 {
			id = kinetics.Water
			nw++
		}
		for i := z * 9; i < (z+1)*9; i++ {
			phase[i] = id
		}
	}
	fw := float64(nw) / float64(box.NZ)
	arith := fw + (1-fw)*CSHRelDiffusivity
	harm := 1 / (fw + (1-fw)/CSHRelDiffusivity)
	res, err := Diffusivity(box, phase, DiffusivityOptions{Tol: 1e-10})
	if err != nil {
		t.Fatal(err)
	}
	if relErr(res.Rel[0], arith) > exactTol || relErr(res.Rel[2], harm) > exactTol {
		t.Errorf("water/C-S-H layers: got x %.9g z %.9g, want %.9g, %.9g", res.Rel[0], res.Rel[2], arith, harm)
	}
}

// TestDiffusivityMaxwell checks one insulating sphere in a periodic 48³
// box against Maxwell's dilute limit σ/σ0 = (1 − f)/(1 + f/2) (Maxwell
// 1873: exact to first order in f), with f the digitised
// sphere's voxel fraction, within 2 %.
func TestDiffusivityMaxwell(t *testing.T) {
	const L = 48
	box := PeriodicBox(L, L, L)
	phase, f := centredSphere(box, 8.5, kinetics.Inert)
	want := (1 - f) / (1 + f/2)
	res, err := Diffusivity(box, phase, DiffusivityOptions{})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("f = %.4f: D/D0 = %v, Maxwell %.5f, iterations %v", f, res.Rel, want, res.Iter)
	for a := range 3 {
		if e := relErr(res.Rel[a], want); e > 0.02 {
			t.Errorf("axis %s: D/D0 = %.5f, Maxwell %.5f (rel. error %.3f > 0.02)", axisNames[a], res.Rel[a], want, e)
		}
	}
	// The cubic symmetry of the box makes the three axes agree closely.
	if relErr(res.Rel[0], res.Rel[2]) > 1e-5 {
		t.Errorf("axes disagree: %v", res.Rel)
	}
}

// TestDiffusivityNoPath checks insulating and isolated cases: D/D0 is 0
// (not NaN), the formation factor +Inf, and nothing is iterated.
func TestDiffusivityNoPath(t *testing.T) {
	for _, box := range []Box{PeriodicBox(6, 5, 4), {NX: 6, NY: 5, NZ: 4}} {
		// All insulating.
		phase := waterPhases(box.Len())
		for i := range phase {
			phase[i] = kinetics.C3S
		}
		res, err := Diffusivity(box, phase, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for a := range 3 {
			if res.Rel[a] != 0 || !math.IsInf(res.Formation[a], 1) || res.Iter[a] != 0 || res.Conducts[a] {
				t.Errorf("%+v all insulating, axis %s: %+v", box, axisNames[a], res)
			}
		}
		// Isolated water islands, and a C-S-H island, in an insulator.
		for _, c := range [][3]int{{1, 1, 1}, {3, 3, 2}, {4, 1, 1}} {
			phase[box.Index(c[0], c[1], c[2])] = kinetics.Water
		}
		phase[box.Index(2, 1, 1)] = kinetics.CSHInner
		res, err = Diffusivity(box, phase, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for a := range 3 {
			if res.Rel[a] != 0 || res.Iter[a] != 0 {
				t.Errorf("%+v islands, axis %s: %+v", box, axisNames[a], res)
			}
		}
	}
}

// TestDiffusivityChannel: a straight pore channel of 2×3 voxels along x
// through an insulator, plus islands and a dead-end branch, conducts
// exactly its area fraction along x and nothing across.
func TestDiffusivityChannel(t *testing.T) {
	for _, periodic := range []bool{true, false} {
		box := Box{NX: 9, NY: 7, NZ: 6, Periodic: [3]bool{periodic, periodic, periodic}}
		phase := waterPhases(box.Len())
		for i := range phase {
			phase[i] = kinetics.CH
		}
		for x := range box.NX {
			for y := 2; y < 4; y++ {
				for z := 1; z < 4; z++ {
					phase[box.Index(x, y, z)] = kinetics.Water
				}
			}
		}
		phase[box.Index(4, 4, 2)] = kinetics.Water // dead end
		phase[box.Index(4, 5, 2)] = kinetics.Water
		phase[box.Index(1, 6, 5)] = kinetics.Empty // island
		res, err := Diffusivity(box, phase, DiffusivityOptions{Tol: 1e-10})
		if err != nil {
			t.Fatal(err)
		}
		want := 6.0 / float64(box.NY*box.NZ)
		if relErr(res.Rel[0], want) > exactTol || res.Rel[1] != 0 || res.Rel[2] != 0 {
			t.Errorf("periodic %v: got %v, want [%g 0 0]", periodic, res.Rel, want)
		}
	}
}

// randomPaste returns a box of water, C-S-H and insulating C3S at random,
// for cross-checks.
func randomPaste(box Box, seed uint64, pWater, pCSH float64) []uint8 {
	rng := rand.New(rand.NewPCG(seed, 99))
	phase := waterPhases(box.Len())
	for i := range phase {
		u := rng.Float64()
		switch {
		case u < pWater:
			phase[i] = kinetics.Water
		case u < pWater+pCSH:
			phase[i] = kinetics.CSHOuter
		default:
			phase[i] = kinetics.C3S
		}
	}
	return phase
}

// TestDiffusivityDeterministic checks that the result is the same, bit for
// bit, for any number of workers and any GOMAXPROCS.
func TestDiffusivityDeterministic(t *testing.T) {
	box := PeriodicBox(20, 18, 16)
	phase := randomPaste(box, 1, 0.35, 0.3)
	var want Diffusion
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	for k, w := range []int{1, 2, 3, 7, 16, 0} {
		runtime.GOMAXPROCS(1 + k%2)
		got, err := Diffusivity(box, phase, DiffusivityOptions{Workers: w})
		if err != nil {
			t.Fatal(err)
		}
		if k == 0 {
			want = got
			continue
		}
		if got != want {
			t.Errorf("workers %d: %+v, want %+v", w, got, want)
		}
	}
}

// TestDiffusivityConsistency cross-checks on random pastes: D/D0 > 0 on an
// axis exactly when a conducting cluster spans it; D lies between the
// harmonic and arithmetic means of the voxel diffusivities (Wiener bounds,
// exact); open and periodic boundaries agree roughly; a reused Solver
// gives the same answer as a fresh one.
func TestDiffusivityConsistency(t *testing.T) {
	var s Solver
	table := DefaultDiffusivities()
	for seed := range uint64(6) {
		box := PeriodicBox(14, 12, 10)
		pw := []float64{0.15, 0.25, 0.45}[seed%3]
		phase := randomPaste(box, seed, pw, 0.25)
		res, err := s.Diffusivity(box, phase, DiffusivityOptions{})
		if err != nil {
			t.Fatal(err)
		}
		fresh, _ := Diffusivity(box, phase, DiffusivityOptions{})
		if fresh != res {
			t.Errorf("seed %d: reused solver %+v, fresh %+v", seed, res, fresh)
		}
		in := make([]bool, box.Len())
		var arith float64
		for i, p := range phase {
			in[i] = table[p] > 0
			arith += table[p]
		}
		arith /= float64(box.Len())
		conn := Label(box, in).Connectivity()
		for a := range 3 {
			if (res.Rel[a] > 0) != conn.Span[a] || res.Conducts[a] != conn.Span[a] {
				t.Errorf("seed %d axis %s: D/D0 %g but conducting span %v", seed, axisNames[a], res.Rel[a], conn.Span[a])
			}
			if res.Rel[a] > arith*(1+1e-6) {
				t.Errorf("seed %d axis %s: D/D0 %g above the arithmetic mean %g", seed, axisNames[a], res.Rel[a], arith)
			}
			if res.Residual[a] > DefaultTol {
				t.Errorf("seed %d axis %s: residual %g above tolerance", seed, axisNames[a], res.Residual[a])
			}
		}
	}
}

func TestDiffusivityOptionErrors(t *testing.T) {
	box := PeriodicBox(3, 3, 3)
	phase := waterPhases(box.Len())
	bad := DefaultDiffusivities()
	bad[kinetics.CH] = -1
	cases := []DiffusivityOptions{
		{Tol: 1.5},
		{Tol: -1e-3},
		{MaxIter: -1},
		{Workers: -2},
		{Table: &bad},
	}
	for _, o := range cases {
		if _, err := Diffusivity(box, phase, o); err == nil {
			t.Errorf("options %+v: no error", o)
		}
	}
	for _, v := range []uint8{0, 250} {
		phase[5] = v
		if _, err := Diffusivity(box, phase, DiffusivityOptions{}); err == nil {
			t.Errorf("value %d (not a phase id): no error", v)
		}
	}
	d := make([]float64, box.Len())
	d[3] = math.NaN()
	if _, err := DiffusivityField(box, d, DiffusivityOptions{}); err == nil {
		t.Error("NaN diffusivity: no error")
	}
	// The iteration cap ends a solve with an error and the estimate.
	phase = randomPaste(PeriodicBox(10, 10, 10), 3, 0.5, 0.3)
	res, err := Diffusivity(PeriodicBox(10, 10, 10), phase, DiffusivityOptions{MaxIter: 2})
	if err == nil || res.Iter[0] != 2 || !(res.Rel[0] > 0) {
		t.Errorf("MaxIter 2: err %v, result %+v", err, res)
	}
}

// TestDiffusivityMirrorBoundaries: for a structure that is mirror-symmetric
// about the mid-plane of each axis, the periodic box and the open box with
// electrodes are the same problem (the periodic faces are then mirror
// planes, equipotential for the field axis and without flux across the
// others), so both modes must agree exactly. This ties the electrode
// discretisation to the periodic one.
func TestDiffusivityMirrorBoundaries(t *testing.T) {
	const L = 12
	box := PeriodicBox(L, L, L)
	rng := rand.New(rand.NewPCG(11, 12))
	phase := waterPhases(box.Len())
	ids := []uint8{kinetics.Water, kinetics.Water, kinetics.CSHInner, kinetics.C3S}
	for z := range L / 2 {
		for y := range L / 2 {
			for x := range L / 2 {
				id := ids[rng.IntN(len(ids))]
				for _, c := range [8][3]int{
					{x, y, z}, {L - 1 - x, y, z}, {x, L - 1 - y, z}, {x, y, L - 1 - z},
					{L - 1 - x, L - 1 - y, z}, {L - 1 - x, y, L - 1 - z}, {x, L - 1 - y, L - 1 - z}, {L - 1 - x, L - 1 - y, L - 1 - z},
				} {
					phase[box.Index(c[0], c[1], c[2])] = id
				}
			}
		}
	}
	opt := DiffusivityOptions{Tol: 1e-11}
	per, err := Diffusivity(box, phase, opt)
	if err != nil {
		t.Fatal(err)
	}
	box.Periodic = [3]bool{}
	open, err := Diffusivity(box, phase, opt)
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("periodic %v, open %v", per.Rel, open.Rel)
	for a := range 3 {
		if !(per.Rel[a] > 0) || relErr(open.Rel[a], per.Rel[a]) > 1e-7 {
			t.Errorf("axis %s: periodic %.12g, open %.12g", axisNames[a], per.Rel[a], open.Rel[a])
		}
	}
}

// TestDiffusivityPreconditioners checks that the multigrid and the Jacobi
// preconditioners converge to the same D/D0 on random pastes, periodic and
// open, including boxes with odd edges and an axis of length 1.
func TestDiffusivityPreconditioners(t *testing.T) {
	boxes := []Box{
		PeriodicBox(21, 16, 13),
		{NX: 17, NY: 20, NZ: 9},
		{NX: 30, NY: 25, NZ: 1, Periodic: [3]bool{true, false, true}},
	}
	for k, box := range boxes {
		phase := randomPaste(box, uint64(k), 0.4, 0.3)
		var mg, jac Solver
		jac.jacobiOnly = true
		opt := DiffusivityOptions{Tol: 1e-10}
		a, err := mg.Diffusivity(box, phase, opt)
		if err != nil {
			t.Fatal(err)
		}
		if len(mg.mg) == 0 {
			t.Fatalf("box %+v: no multigrid levels", box)
		}
		b, err := jac.Diffusivity(box, phase, opt)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("box %+v: multigrid %v in %v iterations, Jacobi %v in %v", box, a.Rel, a.Iter, b.Rel, b.Iter)
		for ax := range 3 {
			if relErr(a.Rel[ax], b.Rel[ax]) > 1e-8 || (a.Rel[ax] > 0) != (b.Rel[ax] > 0) {
				t.Errorf("box %+v axis %s: multigrid %.12g, Jacobi %.12g", box, axisNames[ax], a.Rel[ax], b.Rel[ax])
			}
		}
	}
}

// TestDiffusivityReuseAllocs checks that a sized Solver solves again on its
// own buffers: a reused solve allocates only the multigrid's build scratch
// (diagonals, block coordinates and raw entries, dropped once the levels
// are built) and the labelling's buffers (let go before the vectors are
// sized): at least the vectors, the diagonal codes and the per-voxel
// codes fewer bytes than the first solve.
func TestDiffusivityReuseAllocs(t *testing.T) {
	box := PeriodicBox(24, 20, 16)
	phase := randomPaste(box, 4, 0.35, 0.3)
	var s Solver
	opt := DiffusivityOptions{Workers: 1}
	allocated := func() uint64 {
		var m runtime.MemStats
		runtime.ReadMemStats(&m)
		return m.TotalAlloc
	}
	a0 := allocated()
	if _, err := s.Diffusivity(box, phase, opt); err != nil {
		t.Fatal(err)
	}
	first := allocated() - a0
	if len(s.mg) < 2 {
		t.Fatalf("%d coarse levels, want at least 2", len(s.mg))
	}
	w := &s.w[0]
	a1 := allocated()
	if _, err := s.Diffusivity(box, phase, opt); err != nil {
		t.Fatal(err)
	}
	again := allocated() - a1
	kept := uint64(4*(cap(s.w)+cap(s.r)+cap(s.p)+cap(s.z)) + cap(s.dcode) + cap(s.act))
	t.Logf("first solve %d bytes, reused %d, kept %d", first, again, kept)
	if again+kept > first || &s.w[0] != w {
		t.Errorf("a reused solve allocated %d bytes, the first %d: want at most %d, on the same vectors", again, first, first-kept)
	}
}

// centredSphere returns a box of pore with one digitised sphere of radius r
// voxels and phase id at its centre, and the sphere's voxel fraction.
func centredSphere(box Box, r float64, id uint8) ([]uint8, float64) {
	phase := waterPhases(box.Len())
	cx, cy, cz := float64(box.NX-1)/2, float64(box.NY-1)/2, float64(box.NZ-1)/2
	solid := 0
	for z := range box.NZ {
		for y := range box.NY {
			for x := range box.NX {
				dx, dy, dz := float64(x)-cx, float64(y)-cy, float64(z)-cz
				if dx*dx+dy*dy+dz*dz <= r*r {
					phase[box.Index(x, y, z)] = id
					solid++
				}
			}
		}
	}
	return phase, float64(solid) / float64(box.Len())
}
