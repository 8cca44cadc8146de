package voxel

import "testing"

// TestNeighboursMatchWrap checks the fast neighbour kernel against Wrap on
// tiny boxes, including edges of length 1 and 2.
func TestNeighboursMatchWrap(t *testing.T) {
	for _, d := range [][3]int{{1, 1, 1}, {2, 3, 1}, {3, 4, 5}, {5, 2, 2}} {
		g, err := NewGrid(d[0], d[1], d[2], 1)
		if err != nil {
			t.Fatal(err)
		}
		var nb [6]int
		for i := 0; i < g.Len(); i++ {
			x, y, z := g.Coords(i)
			if g.Index(x, y, z) != i {
				t.Fatalf("Coords/Index mismatch at %d", i)
			}
			g.Neighbours(i, &nb)
			want := [6]int{g.Wrap(x-1, y, z), g.Wrap(x+1, y, z), g.Wrap(x, y-1, z), g.Wrap(x, y+1, z), g.Wrap(x, y, z-1), g.Wrap(x, y, z+1)}
			if nb != want {
				t.Fatalf("box %v voxel %d: got %v want %v", d, i, nb, want)
			}
		}
	}
}

// TestStepMatchesNeighbours checks the one-direction kernel against the
// six-neighbour kernel.
func TestStepMatchesNeighbours(t *testing.T) {
	for _, d := range [][3]int{{1, 1, 1}, {2, 3, 1}, {3, 4, 5}} {
		g, _ := NewGrid(d[0], d[1], d[2], 1)
		var nb [6]int
		for i := 0; i < g.Len(); i++ {
			g.Neighbours(i, &nb)
			for dir := 0; dir < 6; dir++ {
				if s := g.Step(i, dir); s != nb[dir] {
					t.Fatalf("box %v voxel %d dir %d: Step %d, Neighbours %d", d, i, dir, s, nb[dir])
				}
			}
		}
	}
}

// TestNewGridRefusesHugeBoxes: edges whose product overflows are refused,
// not wrapped.
func TestNewGridRefusesHugeBoxes(t *testing.T) {
	for _, d := range [][3]int{{1 << 31, 1 << 31, 4}, {1 << 20, 1 << 20, 1 << 20}, {2000, 2000, 2000}} {
		if _, err := NewGrid(d[0], d[1], d[2], 1); err == nil {
			t.Errorf("box %v accepted", d)
		}
	}
}
