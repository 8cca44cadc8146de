package run

import (
	"errors"
	"strings"
	"testing"
)

// TestGuard: the event-loop guard lets a clock that advances at a real
// paste's pace go on, and stops one that stands still or creeps (more
// than MaxEventsPerVoxelS events per simulated second per voxel); a
// clock that goes back (a replay from a saved state) restarts its
// window.
func TestGuard(t *testing.T) {
	const nvox = 1000
	g := newGuard(MaxEventsPerVoxelS, nvox)
	if err := g(1<<16, 10); err != nil {
		t.Fatalf("first call: %v", err)
	}
	// 65536 more events in 3600 simulated seconds: 0.018 per voxel per s.
	if err := g(2<<16, 3610); err != nil {
		t.Fatalf("a paste's pace stopped: %v", err)
	}
	// a replay from an earlier state: the window restarts
	if err := g(1<<16, 100); err != nil {
		t.Fatalf("a clock going back stopped the run: %v", err)
	}
	// the clock stands still
	err := g(2<<16, 100)
	if !errors.Is(err, ErrSpinning) || !strings.Contains(err.Error(), "standing still") || !strings.Contains(err.Error(), "[kinetics]") {
		t.Fatalf("clock standing still: %v", err)
	}
	// the clock creeps: 65536 events in 1 µs of a 1000-voxel box
	g = newGuard(MaxEventsPerVoxelS, nvox)
	g(1<<16, 50)
	err = g(2<<16, 50+1e-6)
	if !errors.Is(err, ErrSpinning) || !strings.Contains(err.Error(), "events per simulated second per voxel") {
		t.Fatalf("creeping clock: %v", err)
	}
	// at the bound itself the run goes on
	g = newGuard(MaxEventsPerVoxelS, nvox)
	g(0, 0)
	if err := g(1e7, 1e7/(MaxEventsPerVoxelS*nvox)); err != nil {
		t.Fatalf("at the bound: %v", err)
	}
}
