package voxel

import (
	"math"
	"os"
	"runtime"
	"testing"
	"time"

	"gelspace/kinetics"
)

// demoPaste returns paste volume fractions for the demo cement at w/c wc.
func demoPaste(t testing.TB, wc float64) [kinetics.NumIDs]float64 {
	c, err := kinetics.NewComposition(map[string]float64{"c3s": 58, "c2s": 17, "c3a": 7.5, "c4af": 10.5, "gypsum": 5, "calcite": 2})
	if err != nil {
		t.Fatal(err)
	}
	return c.PasteVolumeFractions(wc)
}

func packBox(t testing.TB, n int, wc float64, seed uint64, onePhase bool, gap int) (*PackResult, []Population, *Classes) {
	psd, err := RosinRammler(8, 1.1)
	if err != nil {
		t.Fatal(err)
	}
	cls, err := psd.Classes(1, n)
	if err != nil {
		t.Fatal(err)
	}
	pops := Populations(demoPaste(t, wc), n*n*n, grainsOf(onePhase))
	res, err := Pack(PackSpec{NX: n, NY: n, NZ: n, VoxelUM: 1, Classes: cls, Pops: pops, Seed: seed, SpacingVoxels: gap})
	if err != nil {
		t.Fatal(err)
	}
	return res, pops, cls
}

func TestMaskNaive(t *testing.T) {
	// The span mask against a naive voxel-by-voxel sphere test, and its
	// face count against a brute-force count.
	for d := 1; d <= 31; d++ {
		m := sphereMask(d)
		lo, hi, sh := -(d-1)/2, (d-1)/2, 0.0
		if d%2 == 0 {
			lo, hi, sh = -d/2, d/2-1, 0.5
		}
		in := func(x, y, z int) bool {
			if x < lo || x > hi || y < lo || y > hi || z < lo || z > hi {
				return false
			}
			fx, fy, fz := float64(x)+sh, float64(y)+sh, float64(z)+sh
			return fx*fx+fy*fy+fz*fz <= float64(d*d)/4
		}
		set := map[[3]int]bool{}
		for _, s := range m.spans {
			for x := s.x0; x <= s.x1; x++ {
				set[[3]int{int(x), int(s.dy), int(s.dz)}] = true
			}
		}
		vol, faces := 0, 0
		for z := lo - 1; z <= hi+1; z++ {
			for y := lo - 1; y <= hi+1; y++ {
				for x := lo - 1; x <= hi+1; x++ {
					if in(x, y, z) != set[[3]int{x, y, z}] {
						t.Fatalf("d=%d: voxel %d,%d,%d differs", d, x, y, z)
					}
					if !in(x, y, z) {
						continue
					}
					vol++
					for _, o := range [][3]int{{1, 0, 0}, {-1, 0, 0}, {0, 1, 0}, {0, -1, 0}, {0, 0, 1}, {0, 0, -1}} {
						if !in(x+o[0], y+o[1], z+o[2]) {
							faces++
						}
					}
				}
			}
		}
		if vol != m.volume || faces != m.faces || vol != sphereVolume(d) {
			t.Fatalf("d=%d: volume %d faces %d, naive %d %d", d, m.volume, m.faces, vol, faces)
		}
	}
	if SphereVoxels(1) != 1 || SphereVoxels(2) != 8 || SphereVoxels(3) != 19 {
		t.Fatalf("small spheres: %d %d %d", SphereVoxels(1), SphereVoxels(2), SphereVoxels(3))
	}
}

func TestNoiseRowMatchesNaive(t *testing.T) {
	for _, cell := range []float64{1, 2.5, 3, 7, 40} {
		f := newNoise(42, [3]int{13, 7, 5}, cell)
		row := make([]float64, 13)
		for z := 0; z < 5; z++ {
			for y := 0; y < 7; y++ {
				f.row(y, z, row)
				for x, v := range row {
					if w := f.at(x, y, z); v != w {
						t.Fatalf("cell %g (%d,%d,%d): row %v at %v", cell, x, y, z, v, w)
					}
					if v < 0 || v >= 1 {
						t.Fatalf("value %v outside [0,1)", v)
					}
				}
			}
		}
		// periodic: the field at x and x+n agree
		if f.at(0, 0, 0) != f.at(13, 7, 5) {
			t.Fatalf("cell %g: field not periodic", cell)
		}
	}
}

func TestPackFractions(t *testing.T) {
	// Each phase within ±0.005 of its target volume fraction (the issue's
	// acceptance band); the packer is exact to the voxel, checked too.
	for _, c := range []struct {
		n        int
		seed     uint64
		onePhase bool
		gap      int
	}{{60, 1, false, 0}, {70, 2, true, 0}, {80, 3, false, 0}, {100, 4, false, 0}} {
		res, pops, _ := packBox(t, c.n, 0.45, c.seed, c.onePhase, c.gap)
		g := res.Grid
		cnt := g.Count()
		paste := demoPaste(t, 0.45)
		N := float64(g.Len())
		for _, p := range pops {
			for k, id := range p.Phases {
				if cnt[id] != p.Voxels[k] {
					t.Errorf("n=%d seed %d: %s has %d voxels, target %d", c.n, c.seed, kinetics.Lookup(id).Key, cnt[id], p.Voxels[k])
				}
				if f := float64(cnt[id]) / N; math.Abs(f-paste[id]) > 0.005 {
					t.Errorf("n=%d: %s fraction %.4f, target %.4f", c.n, kinetics.Lookup(id).Key, f, paste[id])
				}
			}
		}
		// every non-zero Particle voxel is solid, every solid voxel has a particle
		for i, ph := range g.Phase {
			if (ph != kinetics.Water) != (g.Particle[i] != 0) {
				t.Fatalf("voxel %d: phase %d particle %d", i, ph, g.Particle[i])
			}
		}
	}
}

func TestPackDeterministic(t *testing.T) {
	a, _, _ := packBox(t, 40, 0.45, 9, false, 0)
	b, _, _ := packBox(t, 40, 0.45, 9, false, 0)
	c, _, _ := packBox(t, 40, 0.45, 10, false, 0)
	same := func(x, y *Grid) bool {
		for i := range x.Phase {
			if x.Phase[i] != y.Phase[i] || x.Particle[i] != y.Particle[i] {
				return false
			}
		}
		return true
	}
	if !same(a.Grid, b.Grid) {
		t.Fatal("same seed, different boxes")
	}
	if same(a.Grid, c.Grid) {
		t.Fatal("different seeds, same box")
	}
}

func TestPackMedian(t *testing.T) {
	// The digitised PSD's volume-weighted median within one voxel diameter
	// of the input's d50 (issue acceptance). The particles' diameters come
	// from their voxel counts (volume-equivalent spheres), not the labels.
	psd, _ := RosinRammler(8, 1.1)
	d50 := psd.MedianUM()
	for _, seed := range []uint64{1, 2, 3} {
		res, _, _ := packBox(t, 80, 0.45, seed, false, 0)
		g := res.Grid
		vox := make([]int, len(res.Diameter))
		for _, p := range g.Particle {
			vox[p]++
		}
		var ds [200]int // volume per equivalent diameter rounded
		total := 0
		for id := 1; id < len(vox); id++ {
			d := int(math.Round(math.Cbrt(6 * float64(vox[id]) / math.Pi)))
			ds[d] += vox[id]
			total += vox[id]
		}
		acc, med := 0, 0
		for d, v := range ds {
			acc += v
			if 2*acc >= total {
				med = d
				break
			}
		}
		if math.Abs(float64(med)-d50) > 1 {
			t.Errorf("seed %d: digitised median %d voxels, input d50 %.2f", seed, med, d50)
		}
	}
}

func TestPackPeriodic(t *testing.T) {
	// A particle crossing a face continues on the opposite face: every
	// particle is one connected piece under periodic 6-connectivity, and
	// some are split when the box is cut open.
	res, _, _ := packBox(t, 60, 0.45, 5, false, 0)
	g := res.Grid
	seen := make([]bool, g.Len())
	pieces := make([]int, len(res.Diameter))
	open := 0
	var nb [6]int
	var stack []int
	for periodic := 0; periodic < 2; periodic++ {
		clear(seen)
		clear(pieces)
		for i, p := range g.Particle {
			if p == 0 || seen[i] {
				continue
			}
			pieces[p]++
			stack = append(stack[:0], i)
			seen[i] = true
			for len(stack) > 0 {
				j := stack[len(stack)-1]
				stack = stack[:len(stack)-1]
				g.Neighbours(j, &nb)
				x, y, z := g.Coords(j)
				for k, n := range nb {
					if periodic == 0 {
						c := [3]int{x, y, z}[k/2]
						edge := [3]int{g.NX, g.NY, g.NZ}[k/2] - 1
						if (k%2 == 0 && c == 0) || (k%2 == 1 && c == edge) {
							continue
						}
					}
					if !seen[n] && g.Particle[n] == p {
						seen[n] = true
						stack = append(stack, n)
					}
				}
			}
		}
		for id := 1; id < len(pieces); id++ {
			if periodic == 1 && pieces[id] != 1 {
				t.Fatalf("particle %d is %d pieces with periodic wrapping", id, pieces[id])
			}
			if periodic == 0 && pieces[id] > 1 {
				open++
			}
		}
	}
	if open == 0 {
		t.Fatal("no particle crosses a face")
	}
}

func TestPackUnreachable(t *testing.T) {
	psd, _ := RosinRammler(8, 1.1)
	cls, _ := psd.Classes(1, 30)
	pops := Populations(demoPaste(t, 0.12), 30*30*30, Polymineral)
	_, err := Pack(PackSpec{NX: 30, NY: 30, NZ: 30, VoxelUM: 1, Classes: cls, Pops: pops, SpacingVoxels: 2, Seed: 1})
	if _, ok := err.(*PackError); !ok {
		t.Fatalf("dense dispersed box: got %v, want a PackError", err)
	}
	// Classes for a 40 box used on a 20 box: particles too big.
	cls40, _ := psd.Classes(1, 60)
	pops = Populations(demoPaste(t, 0.45), 20*20*20, Polymineral)
	_, err = Pack(PackSpec{NX: 20, NY: 20, NZ: 20, VoxelUM: 1, Classes: cls40, Pops: pops, Seed: 1})
	if _, ok := err.(*PackError); !ok {
		t.Fatalf("particles larger than box: got %v, want a PackError", err)
	}
}

func TestSurface(t *testing.T) {
	// One isolated sphere: the grid surface equals the mask's face count.
	g, _ := NewGrid(20, 20, 20, 1)
	pk := packer{g: g}
	m := sphereMask(7)
	pk.fill(m, g.Index(0, 0, 0), 1, kinetics.C3S) // wraps across faces
	want := 1000 * float64(m.faces) / (float64(m.volume) * 3.15)
	if got := SpecificSurfaceM2PerKg(g); math.Abs(got-want) > 1e-9 {
		t.Fatalf("surface %g, want %g", got, want)
	}
}

func BenchmarkPack200(b *testing.B) {
	// Issue target: 200³ at w/c 0.40 in under 5 s on one core, peak memory
	// under 6 bytes per voxel. Run with -benchtime=1x.
	n := 200
	if os.Getenv("GELSPACE_BENCH_N") == "100" {
		n = 100
	}
	for b.Loop() {
		runtime.GC()
		var before runtime.MemStats
		runtime.ReadMemStats(&before)
		// sample the live heap while packing
		stop := make(chan struct{})
		peak := make(chan uint64)
		go func() {
			var m runtime.MemStats
			hi := uint64(0)
			for {
				select {
				case <-stop:
					peak <- hi
					return
				case <-time.After(2 * time.Millisecond):
					runtime.ReadMemStats(&m)
					hi = max(hi, m.HeapAlloc)
				}
			}
		}()
		psd, _ := RosinRammler(14, 1.05)
		cls, _ := psd.Classes(1, n)
		pops := Populations(demoPaste(b, 0.40), n*n*n, Polymineral)
		res, err := Pack(PackSpec{NX: n, NY: n, NZ: n, VoxelUM: 1, Classes: cls, Pops: pops, Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		var after runtime.MemStats
		runtime.ReadMemStats(&after)
		close(stop)
		b.ReportMetric(float64(<-peak)/float64(n*n*n), "peak-heap-B/voxel")
		b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/float64(n*n*n), "alloc-B/voxel")
		b.ReportMetric(float64(len(res.Diameter)-1), "particles")
		b.ReportMetric(float64(res.Scans), "scans")
	}
}

func TestPackGap(t *testing.T) {
	// Dispersed: with a gap of 1 voxel no two particles share a face.
	res, pops, _ := packBox(t, 50, 0.8, 7, false, 1)
	g := res.Grid
	var nb [6]int
	for i, p := range g.Particle {
		if p == 0 {
			continue
		}
		g.Neighbours(i, &nb)
		for _, j := range nb {
			if q := g.Particle[j]; q != 0 && q != p {
				t.Fatalf("particles %d and %d touch at voxel %d", p, q, i)
			}
		}
	}
	cnt := g.Count()
	for _, p := range pops {
		for k, id := range p.Phases {
			if cnt[id] != p.Voxels[k] {
				t.Errorf("%s: %d voxels, target %d", kinetics.Lookup(id).Key, cnt[id], p.Voxels[k])
			}
		}
	}
}

func TestPackLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("set GELSPACE_LONG=1 for the 200³ pack")
	}
	// The benchmark's box (200³, w/c 0.40) and a sealed-like low w/c with
	// one phase per grain: exact phase counts in both.
	for _, c := range []struct {
		wc       float64
		onePhase bool
	}{{0.40, false}, {0.35, true}} {
		res, pops, _ := packBox(t, 200, c.wc, 11, c.onePhase, 0)
		cnt := res.Grid.Count()
		for _, p := range pops {
			for k, id := range p.Phases {
				if cnt[id] != p.Voxels[k] {
					t.Errorf("w/c %g: %s %d voxels, target %d", c.wc, kinetics.Lookup(id).Key, cnt[id], p.Voxels[k])
				}
			}
		}
	}
}

// grainsOf maps the tests' one-phase flag to the grain mineralogy.
func grainsOf(onePhase bool) ClinkerGrains {
	if onePhase {
		return Monomineral
	}
	return Polymineral
}
