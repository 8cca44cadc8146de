package run

import (
	"fmt"

	"gelspace/voxel"
)

// MaxEventsPerVoxelS bounds the event rate of a run, in events per
// simulated second per voxel of the box. Real pastes stay many orders of
// magnitude below it (the default paste fires well under one event per
// voxel per simulated hour); at the bound one simulated hour of a 100³ box
// would take 3.6·10¹³ events, so a run above it would never end: its
// clock is creeping by steps too small to reach the end, and it is
// stopped with an error rather than left to hang.
const MaxEventsPerVoxelS = 1e4

// ErrSpinning is wrapped by the error of a run stopped by the guard.
var ErrSpinning = fmt.Errorf("run: the event loop is spinning")

// guardEngine installs the guard on e: every voxel.GuardEvery events it
// compares the events fired with the simulated time elapsed since the
// previous call, and stops the run when the rate passes
// perVoxelS (MaxEventsPerVoxelS in runs). A clock that goes back (a clone replaying from a
// saved state) restarts the window.
func guardEngine(e *voxel.Engine, perVoxelS float64) {
	e.SetGuard(newGuard(perVoxelS, e.Grid().Len()))
}

// newGuard returns the guard of a box of nvox voxels allowed perVoxelS
// events per simulated second per voxel: it is called with the events
// fired and the simulated time (s) so far.
func newGuard(perVoxelS float64, nvox int) func(ev uint64, t float64) error {
	limit := perVoxelS * float64(nvox)
	var lastEv uint64
	lastT, started := 0.0, false
	return func(ev uint64, t float64) error {
		if !started || t < lastT || ev < lastEv {
			lastEv, lastT, started = ev, t, true
			return nil
		}
		dEv, dT := float64(ev-lastEv), t-lastT
		if dEv > limit*dT {
			rate := "with the clock standing still"
			if dT > 0 {
				rate = fmt.Sprintf("at %.3g events per simulated second per voxel", dEv/dT/float64(nvox))
			}
			return fmt.Errorf("%w at %.6g h: %.0f events %s (at most %g): a rate constant in [kinetics] is too large or a saturation too small for the clock to advance", ErrSpinning, t/3600, dEv, rate, perVoxelS)
		}
		lastEv, lastT = ev, t
		return nil
	}
}
