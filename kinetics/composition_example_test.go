package kinetics_test

import (
	"fmt"

	"gelspace/kinetics"
)

// The worked example (Bogue, ASTM C150 Annex A1;
// Published copies round to C3S 58.1, C2S 15.2, C3A 8.5, C4AF 8.8 — derived).
func ExampleBogue() {
	b, err := kinetics.Bogue(kinetics.Oxides{SiO2: 20.6, Al2O3: 5.07, Fe2O3: 2.90, CaO: 63.9, SO3: 2.53})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("C3S %.2f  C2S %.2f  C3A %.2f  C4AF %.2f\n", b.C3S, b.C2S, b.C3A, b.C4AF)
	// Output: C3S 58.15  C2S 15.19  C3A 8.53  C4AF 8.82
}

// Fresh-paste volumes of a cement at w/c 0.45.
func ExampleComposition_SolidVolumeFraction() {
	c, err := kinetics.NewComposition(map[string]float64{"c3s": 60, "c2s": 20, "c3a": 8, "c4af": 7, "gypsum": 5})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("ρ %.3f g/cm³, solid fraction %.3f\n", c.DensityGPerCM3(), c.SolidVolumeFraction(0.45))
	// Output: ρ 3.143 g/cm³, solid fraction 0.414
}
