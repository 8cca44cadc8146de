package percolation

import (
	"math/rand/v2"
	"testing"
)

// BenchmarkLabel200 labels random site percolation at p = 0.35, just above
// the threshold, on an open 200³ box (8 million voxels).
func BenchmarkLabel200(b *testing.B) {
	box := Box{NX: 200, NY: 200, NZ: 200}
	in := randomSet(rand.New(rand.NewPCG(7, 8)), box.Len(), 0.35)
	var l Labeler
	l.Label(box, in) // size the buffers
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		l.Label(box, in)
	}
}

// BenchmarkLabel200Periodic is BenchmarkLabel200 on a periodic box.
func BenchmarkLabel200Periodic(b *testing.B) {
	box := PeriodicBox(200, 200, 200)
	in := randomSet(rand.New(rand.NewPCG(7, 8)), box.Len(), 0.35)
	var l Labeler
	l.Label(box, in)
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		l.Label(box, in)
	}
}
