package run_test

import (
	"fmt"
	"log"
	"os"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
)

// A Go program builds a small paste from the embedded default cement (a
// 32³ box of 1 µm voxels at w/c 0.45), hydrates it for a day at 20 °C and
// reads the degree of hydration and the set time (the 30 % of the powder
// coarser than 16 µm is carried outside the box); the files of the run
// (series.csv, summary.json, volumes) go to a temporary folder.
func Example() {
	cfg, err := configs.Load("", []string{
		"box.voxels=32",
		"curing.until_h=24",
		"output.times_h=[2, 4, 8, 24]",
		"output.diffusivity=false",
	})
	if err != nil {
		log.Fatal(err)
	}
	dir, err := os.MkdirTemp("", "gelspace-example")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)

	res, err := run.Run(cfg, run.Options{Out: dir})
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("α at %g h: %.2f, capillary porosity %.2f\n", res.TimeH, res.Alpha, res.CapillaryPorosity)
	if res.Set != nil {
		fmt.Printf("set at %.1f h (α %.2f)\n", res.Set.TimeH, res.Set.Alpha)
	}
	// Output:
	// α at 24 h: 0.32, capillary porosity 0.41
	// set at 4.8 h (α 0.05)
}
