package percolation

import (
	"fmt"

	"gelspace/kinetics"
)

// Pores returns the connectivity of the capillary pore space: the voxels
// whose phase is a pore id (kinetics.IsPore: water-filled and empty), joined
// across every shared face. It panics if len(phase) does not match the box.
func Pores(box Box, phase []uint8) Connectivity {
	var l Labeler
	return l.Pores(box, phase)
}

// Solids returns the connectivity of the solid skeleton used for the set
// point. Sites are the solid voxels (kinetics.IsSolid); two face neighbours
// a, b are bonded when either is a hydrate, or when both are anhydrous and
// belong to the same original particle: particle[a] == particle[b] != 0.
// Two grains that merely touch are thus not bonded until a hydrate joins
// them, and anhydrous voxels with particle id 0 bond only through hydrates.
// particle may be nil, meaning 0 everywhere. It panics if a slice length
// does not match the box.
func Solids(box Box, phase []uint8, particle []int32) Connectivity {
	var l Labeler
	return l.Solids(box, phase, particle)
}

// Pores is the package-level Pores on l's buffers.
func (l *Labeler) Pores(box Box, phase []uint8) Connectivity {
	box.mustFit(len(phase), "phase")
	in := l.set(len(phase))
	for i, p := range phase {
		in[i] = kinetics.IsPore(p)
	}
	return l.Label(box, in).Connectivity()
}

// Solids is the package-level Solids on l's buffers.
func (l *Labeler) Solids(box Box, phase []uint8, particle []int32) Connectivity {
	return l.SolidClusters(box, phase, particle).Connectivity()
}

// SolidClusters labels the solid skeleton with the bond rule of Solids and
// returns the clusters, which belong to l as for Label.
func (l *Labeler) SolidClusters(box Box, phase []uint8, particle []int32) *Clusters {
	box.mustFit(len(phase), "phase")
	if particle != nil && len(particle) != len(phase) {
		panic(fmt.Sprintf("percolation: particle has length %d, phase has %d", len(particle), len(phase)))
	}
	in := l.set(len(phase))
	for i, p := range phase {
		in[i] = kinetics.IsSolid(p)
	}
	bond := func(a, b int) bool {
		pa, pb := phase[a], phase[b]
		if kinetics.IsHydrate(pa) || kinetics.IsHydrate(pb) {
			return true
		}
		return particle != nil && particle[a] != 0 && particle[a] == particle[b]
	}
	return l.LabelBonded(box, in, bond)
}

// set returns the scratch voxel set of length n.
func (l *Labeler) set(n int) []bool {
	if cap(l.in) < n {
		l.in = make([]bool, n)
	}
	l.in = l.in[:n]
	return l.in
}
