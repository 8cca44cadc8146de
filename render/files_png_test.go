package render

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"testing"
)

// TestEncodePNGLossless: the paletted fast path decodes to the very pixels
// it was given, and an image of more than 256 colours still encodes.
func TestEncodePNGLossless(t *testing.T) {
	for _, colours := range []int{1, 17, 256, 300} {
		img := image.NewRGBA(image.Rect(0, 0, 40, 30))
		for i := range 40 * 30 {
			k := i % colours
			img.Set(i%40, i/40, color.RGBA{uint8(k), uint8(k >> 8), uint8(3 * k), 255})
		}
		var b bytes.Buffer
		if err := EncodePNG(&b, img); err != nil {
			t.Fatal(err)
		}
		got, err := png.Decode(&b)
		if err != nil {
			t.Fatal(err)
		}
		_, paletted := got.(*image.Paletted)
		if paletted != (colours <= 256) {
			t.Errorf("%d colours: paletted %v", colours, paletted)
		}
		for y := 0; y < 30; y++ {
			for x := 0; x < 40; x++ {
				r1, g1, b1, a1 := img.At(x, y).RGBA()
				r2, g2, b2, a2 := got.At(x, y).RGBA()
				if r1 != r2 || g1 != g2 || b1 != b2 || a1 != a2 {
					t.Fatalf("%d colours: pixel (%d,%d) changed", colours, x, y)
				}
			}
		}
	}
}
