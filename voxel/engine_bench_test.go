package voxel

import (
	"runtime"
	"testing"
	"time"

	"gelspace/kinetics"
)

// benchHydrate hydrates the demo paste (w/c 0.45) in an n³ box to 28 days
// and reports events per second, walk steps per event and the live heap
// per voxel after setting up and at the end (lattice, classes, dissolved
// units): the heap is largest at the start, when most grain surface is
// exposed.
func benchHydrate(b *testing.B, n int) {
	for i := 0; i < b.N; i++ {
		b.StopTimer()
		g := enginePaste(b, n, 1, 0.45, 1)
		b.StartTimer()
		start := time.Now()
		e := newTestEngine(b, g, 20, false, 1)
		b.StopTimer()
		runtime.GC()
		var atStart runtime.MemStats
		runtime.ReadMemStats(&atStart)
		b.ReportMetric(float64(atStart.HeapAlloc)/float64(g.Len()), "B/voxel-start")
		b.StartTimer()
		if err := e.AdvanceTo(672); err != nil {
			b.Fatal(err)
		}
		wall := time.Since(start).Seconds()
		b.StopTimer()
		runtime.GC()
		var after runtime.MemStats
		runtime.ReadMemStats(&after)
		ev, st := e.Events()
		b.ReportMetric(float64(ev)/wall, "events/s")
		b.ReportMetric(float64(st)/float64(ev), "steps/event")
		b.ReportMetric(float64(after.HeapAlloc)/float64(g.Len()), "B/voxel-end")
		b.ReportMetric(e.Alpha(), "alpha28d")
		runtime.KeepAlive(e)
		b.StartTimer()
	}
}

func BenchmarkHydrate100(b *testing.B) { benchHydrate(b, 100) }
func BenchmarkHydrate200(b *testing.B) { benchHydrate(b, 200) }

// BenchmarkCheckpoint100 saves a hydrated 100³ engine to memory.
func BenchmarkCheckpoint100(b *testing.B) {
	g := enginePaste(b, 100, 1, 0.45, 1)
	e := newTestEngine(b, g, 20, false, 1)
	if err := e.AdvanceTo(24); err != nil {
		b.Fatal(err)
	}
	set := EngineSettings{Params: kinetics.DefaultParams(), Thermal: kinetics.Thermal{TempC: 20}, Seed: 1}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		var w countWriter
		if err := e.WriteCheckpoint(&w, &set, nil); err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(w), "bytes")
	}
}

type countWriter int

func (c *countWriter) Write(p []byte) (int, error) { *c += countWriter(len(p)); return len(p), nil }
