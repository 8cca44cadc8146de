package run

import (
	"encoding/json"
	"strings"
	"testing"

	"gelspace/kinetics"
	"gelspace/percolation"
	"gelspace/voxel"
)

// A volume whose pores do not conduct gets formation_factor null in JSON
// (not −1), as the other "not reached" values.
func TestAnalyzeDisconnectedFormationNull(t *testing.T) {
	g, err := voxel.NewGrid(8, 8, 8, 1)
	if err != nil {
		t.Fatal(err)
	}
	for i := range g.Phase {
		g.Phase[i] = uint8(kinetics.C3S)
	}
	g.Phase[g.Index(4, 4, 4)] = uint8(kinetics.Water) // an isolated pore
	rep, err := Analyze(percolation.PeriodicBox(8, 8, 8), g, 1e-6)
	if err != nil {
		t.Fatal(err)
	}
	b, err := json.Marshal(rep)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(string(b), `"formation_factor":[null,null,null]`) {
		t.Errorf("JSON %s: want formation_factor [null, null, null]", b)
	}
}
