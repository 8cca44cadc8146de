package voxel

import (
	"bytes"
	"math/rand/v2"
	"testing"

	"gelspace/kinetics"
)

// walkRef is the walk as first written, reading the six neighbours'
// phases at every step; walk must agree with it exactly, random draws
// included.
func (e *Engine) walkRef(pos int32, rule *stickRule, q kinetics.ID, steps int) (int32, bool) {
	g := e.g
	ph := g.Phase
	if ph[pos] != kinetics.Water {
		p, ok := e.relocate(int(pos))
		if !ok {
			return pos, false
		}
		pos = int32(p)
	}
	i := int(pos)
	var bits uint64
	nbits := 0
	var nb [6]int
	for s := 0; ; s++ {
		g.Neighbours(i, &nb)
		if e.sticksAtRef(&nb, rule) {
			e.precipitate(i, q)
			e.s.Steps += uint64(s)
			return int32(i), true
		}
		if s == steps {
			e.s.Steps += uint64(s)
			return int32(i), false
		}
		var dir int
		for {
			if nbits < 3 {
				bits, nbits = e.r.Uint64(), 64
			}
			dir = int(bits & 7)
			bits >>= 3
			nbits -= 3
			if dir < 6 {
				break
			}
		}
		if ph[nb[dir]] != kinetics.Water {
			continue
		}
		i = nb[dir]
	}
}

func (e *Engine) sticksAtRef(nb *[6]int, r *stickRule) bool {
	ph := e.g.Phase
	var best float32
	seeded := false
	for _, j := range nb {
		q := ph[j]
		if r.on[q] > best {
			best = r.on[q]
		}
		if r.seed[q] {
			seeded = true
		}
	}
	if seeded {
		for _, j := range nb {
			if v := r.seeded[ph[j]]; v > best {
				best = v
			}
		}
	}
	if best <= 0 {
		return false
	}
	return best >= 1 || e.r.Float32() < best
}

// checkSolidNb compares the engine's solidNb with a recomputation.
func checkSolidNb(t *testing.T, e *Engine, when string) {
	t.Helper()
	want := append([]uint8(nil), e.solidNb...)
	hyd := append([]uint8(nil), e.hydNb...)
	e.buildSolidNb()
	if !bytes.Equal(hyd, e.hydNb) {
		t.Fatalf("%s: hydNb differs from a recomputation", when)
	}
	if !bytes.Equal(want, e.solidNb) {
		for i := range want {
			if want[i] != e.solidNb[i] {
				t.Fatalf("%s: solidNb[%d] = %06b kept, %06b recomputed", when, i, want[i], e.solidNb[i])
			}
		}
	}
}

// exposureRef counts the water and hydrate neighbours of voxel i from the
// lattice.
func (e *Engine) exposureRef(i int) (w, h int) {
	var nb [6]int
	e.g.Neighbours(i, &nb)
	for _, j := range nb {
		if q := e.g.Phase[j]; q == kinetics.Water {
			w++
		} else if kinetics.IsHydrate(q) {
			h++
		}
	}
	return
}

// checkExposure compares exposure with exposureRef at every voxel.
func checkExposure(t *testing.T, e *Engine, when string) {
	t.Helper()
	for i := range e.g.Phase {
		w, h := e.exposure(i)
		if rw, rh := e.exposureRef(i); w != rw || h != rh {
			t.Fatalf("%s: exposure of voxel %d is (%d, %d), the lattice gives (%d, %d)", when, i, w, h, rw, rh)
		}
	}
}

// smallEngine returns an engine on a random nx×ny×nz lattice of water,
// C3S, gypsum, C-S-H and empty voxels.
func smallEngine(t *testing.T, nx, ny, nz int, seed uint64) *Engine {
	t.Helper()
	g, err := NewGrid(nx, ny, nz, 1)
	if err != nil {
		t.Fatal(err)
	}
	r := rand.New(rand.NewPCG(seed, 7))
	ids := []kinetics.ID{kinetics.Water, kinetics.Water, kinetics.Water, kinetics.C3S, kinetics.Gypsum, kinetics.CSHOuter, kinetics.Empty}
	for i := range g.Phase {
		g.Phase[i] = ids[r.IntN(len(ids))]
	}
	g.Phase[0] = kinetics.C3S // some cement
	g.Phase[g.Len()-1] = kinetics.Gypsum
	return newTestEngine(t, g, 20, false, seed)
}

// TestSolidNbKept changes random voxels of small boxes, short edges
// included, and checks the neighbour bits against a recomputation.
func TestSolidNbKept(t *testing.T) {
	ids := []kinetics.ID{kinetics.Water, kinetics.C3S, kinetics.Gypsum, kinetics.CSHOuter, kinetics.CH, kinetics.Empty}
	for _, dims := range [][3]int{{1, 1, 1}, {1, 2, 3}, {2, 2, 2}, {3, 1, 4}, {5, 4, 3}, {7, 6, 5}} {
		e := smallEngine(t, dims[0], dims[1], dims[2], uint64(dims[0]*100+dims[1]*10+dims[2]))
		checkSolidNb(t, e, "start")
		r := rand.New(rand.NewPCG(3, uint64(dims[2])))
		for k := 0; k < 400; k++ {
			e.setPhase(r.IntN(e.g.Len()), ids[r.IntN(len(ids))])
			checkSolidNb(t, e, "after setPhase")
			checkExposure(t, e, "after setPhase")
		}
		c := e.Clone()
		checkSolidNb(t, c, "clone")
	}
}

// TestWalkMatchesRef walks units from many voxels of hydrating pastes with
// walk and with walkRef on two clones and requires the same end, the same
// lattice, the same step count and the same random stream afterwards, for
// the growth rules, the trapped-unit rule and a rule that sticks in water
// with a random draw.
func TestWalkMatchesRef(t *testing.T) {
	drawRule := &stickRule{}
	drawRule.on[kinetics.Water] = 0.01
	drawRule.on[kinetics.C3S] = 0.5
	drawRule.finish()
	seedRule := &stickRule{}
	seedRule.on[kinetics.CSHOuter] = 0.3
	seedRule.seed[kinetics.Water] = true
	seedRule.seeded[kinetics.Water] = 0.002
	seedRule.seeded[kinetics.C3S] = 1
	seedRule.finish()
	if v, w := drawRule.inWaterVal, seedRule.inWaterVal; !(v > 0 && v < 1 && w > 0 && w < 1) {
		t.Fatal("the test rules should draw in water")
	}
	type box struct {
		e      *Engine
		untilH float64
	}
	var boxes []box
	for _, dims := range [][3]int{{1, 3, 4}, {2, 5, 3}, {9, 8, 7}} {
		boxes = append(boxes, box{smallEngine(t, dims[0], dims[1], dims[2], 5), 0})
	}
	for _, h := range []float64{0, 10, 100} {
		e := newTestEngine(t, enginePaste(t, 20, 1, 0.45, 2), 20, false, 3)
		boxes = append(boxes, box{e, h})
	}
	shutIn := 0
	for bi, b := range boxes {
		e := b.e
		if err := e.AdvanceTo(b.untilH); err != nil {
			t.Fatal(err)
		}
		rules := []*stickRule{&e.anySolid, drawRule, seedRule}
		var qs []kinetics.ID
		for _, q := range e.products {
			rules = append(rules, e.rules[q])
			qs = append(qs, q)
		}
		pick := rand.New(rand.NewPCG(uint64(bi), 11))
		for k := 0; k < 300; k++ {
			ri := pick.IntN(len(rules))
			q := kinetics.CSHOuter
			if ri >= 3 {
				q = qs[ri-3]
			}
			pos := int32(pick.IntN(e.g.Len()))
			steps := []int{0, 1, 7, 200}[pick.IntN(4)]
			if e.g.Phase[pos] == kinetics.Water && e.solidNb[pos] == 0x3f {
				shutIn++
			}
			a, ref := e.Clone(), e.Clone()
			p1, ok1 := a.walk(pos, rules[ri], q, steps)
			p2, ok2 := ref.walkRef(pos, rules[ri], q, steps)
			if p1 != p2 || ok1 != ok2 || a.s.Steps != ref.s.Steps {
				t.Fatalf("box %d walk %d: walk gives (%d, %v, %d steps), the reference (%d, %v, %d steps)", bi, k, p1, ok1, a.s.Steps, p2, ok2, ref.s.Steps)
			}
			if !bytes.Equal(a.g.Phase, ref.g.Phase) || a.r.Uint64() != ref.r.Uint64() {
				t.Fatalf("box %d walk %d: lattice or random stream differ after the walk", bi, k)
			}
			checkSolidNb(t, a, "after walk")
			e = a // go on from the changed lattice
			if k%50 == 49 {
				if err := e.AdvanceTo(e.TimeH() + 2); err != nil {
					t.Fatal(err)
				}
			}
		}
		checkSolidNb(t, e, "after run")
	}
	if shutIn < 10 {
		t.Errorf("only %d walks started shut in by six solid neighbours", shutIn)
	}
}

// TestDividerAndNeighbours checks the engine's division-free coords and
// neighbours against Grid's, and the divider on edge values.
func TestDividerAndNeighbours(t *testing.T) {
	r := rand.New(rand.NewPCG(1, 2))
	for _, d := range []int{1, 2, 3, 7, 100, 200, 255, 1000, 1024, 1 << 15, 40000, 1<<30 - 1} {
		v := newDivider(d)
		for k := 0; k < 20000; k++ {
			n := int(r.Uint32())
			switch k {
			case 0:
				n = 0
			case 1:
				n = 1<<32 - 1
			case 2:
				n = d - 1
			case 3:
				n = d
			}
			if q, m := v.divMod(n); q != n/d || m != n%d {
				t.Fatalf("%d / %d: divider gives %d rem %d", n, d, q, m)
			}
		}
	}
	for _, dims := range [][3]int{{1, 1, 1}, {1, 2, 3}, {2, 2, 2}, {3, 1, 4}, {5, 4, 3}, {13, 7, 2}} {
		e := smallEngine(t, dims[0], dims[1], dims[2], 9)
		var a, b [6]int
		for i := range e.g.Phase {
			e.neighbours(i, &a)
			e.g.Neighbours(i, &b)
			x, y, z := e.coords(i)
			if gx, gy, gz := e.g.Coords(i); a != b || x != gx || y != gy || z != gz {
				t.Fatalf("box %v voxel %d: neighbours %v coords (%d %d %d), the grid's %v (%d %d %d)", dims, i, a, x, y, z, b, gx, gy, gz)
			}
		}
	}
}
