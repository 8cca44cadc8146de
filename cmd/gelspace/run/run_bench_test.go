package run

import (
	"testing"

	"gelspace/configs"
)

// BenchmarkRunDefault runs the embedded default (100³, 28 days) on one
// core in three steps, so that the cost of each addition shows:
// hydration with connectivity at every output age and the set and
// depercolation refinement; then with every image, plot and the report;
// then with D/D0 at the end as well. Compare with
// voxel.BenchmarkHydrate100 (the engine alone).
func BenchmarkRunDefault(b *testing.B) {
	for _, c := range []struct {
		name         string
		images, diff bool
	}{{"connectivity", false, false}, {"connectivity+images", true, false}, {"connectivity+images+diffusivity", true, true}} {
		b.Run(c.name, func(b *testing.B) {
			for i := 0; i < b.N; i++ {
				sets := []string{"output.diffusivity=false"}
				if c.diff {
					sets = nil
				}
				cfg, err := configs.Load("", sets)
				if err != nil {
					b.Fatal(err)
				}
				if _, err := Run(cfg, Options{Out: b.TempDir(), Images: c.images, Workers: 1}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
