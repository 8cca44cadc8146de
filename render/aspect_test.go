package render

import (
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// columnVolume is an nx×ny×nz box of alternating C3S and water layers
// along z, so that every slice and face shows both phases.
func columnVolume(nx, ny, nz int) Volume {
	v := Volume{Phase: make([]uint8, nx*ny*nz), NX: nx, NY: ny, NZ: nz, VoxelUM: 1}
	for z := 0; z < nz; z++ {
		id := uint8(1) // water
		if z%2 == 0 {
			id = 21 // C3S
		}
		for k := 0; k < nx*ny; k++ {
			v.Phase[z*nx*ny+k] = id
		}
	}
	return v
}

// TestLongColumnRender renders a 1×1×1000 column along z. The 3D view
// must stay within its width and maxBoxHeight × its width (it once grew
// 370 000 px high, so a long thin volume took a minute and gigabytes),
// and the slices along z are drawn one pixel per voxel: the xz and yz
// slices are 1000 px of slice high plus the header and footer.
func TestLongColumnRender(t *testing.T) {
	v := columnVolume(1, 1, 1000)
	img, err := RenderCutAway(v, CutAwayOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b := img.Bounds()
	if b.Dy() > int(maxBoxHeight*640)+200 || b.Dx() > 640+600 {
		t.Errorf("3D view of a 1×1×1000 column is %d×%d px; want at most about %d high", b.Dx(), b.Dy(), int(maxBoxHeight*640)+200)
	}
	// The column is drawn: some pixels are neither white nor the frame.
	coloured := 0
	for i := 0; i < len(img.Pix); i += 4 {
		r, g, bb := img.Pix[i], img.Pix[i+1], img.Pix[i+2]
		if !(r == g && g == bb) {
			coloured++
		}
	}
	if coloured < 500 {
		t.Errorf("3D view of the column has %d coloured pixels; want the column drawn (≥ 500)", coloured)
	}

	dir := t.TempDir()
	files, err := RenderVolume(dir, v.Phase, v.NX, v.NY, v.NZ, v.VoxelUM, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if len(files) != 8 {
		t.Fatalf("%d files, want 8 (3 planes and the 3D view, 2 looks)", len(files))
	}
	wantSliceH := int(marginPX+headerPX) + 1000 + int(footerPX+marginPX)
	for _, p := range files {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		cfg, err := png.DecodeConfig(f)
		f.Close()
		if err != nil {
			t.Fatalf("%s: %v", p, err)
		}
		name := filepath.Base(p)
		switch {
		case strings.Contains(name, "_xz_") || strings.Contains(name, "_yz_"):
			if cfg.Height != wantSliceH {
				t.Errorf("%s: %d px high, want %d (1000 voxels at 1 px, with header and footer)", name, cfg.Height, wantSliceH)
			}
		case strings.Contains(name, "_xy_"):
			// one voxel, magnified to MaxSlicePX
			if cfg.Height > MaxSlicePX+400 {
				t.Errorf("%s: %d px high, want at most %d", name, cfg.Height, MaxSlicePX+400)
			}
		default: // cut-away
			if cfg.Height > int(maxBoxHeight*640)+200 {
				t.Errorf("%s: %d px high, want at most %d", name, cfg.Height, int(maxBoxHeight*640)+200)
			}
		}
	}
}

// BenchmarkRenderLongColumn renders every picture of a 1×1×1000 column
// and of a 1000×1×1 row: the cost should follow the pixels drawn, not the
// box's aspect ratio.
func BenchmarkRenderLongColumn(b *testing.B) {
	for _, c := range []struct {
		name       string
		nx, ny, nz int
	}{{"z1000", 1, 1, 1000}, {"x1000", 1000, 1, 1}} {
		v := columnVolume(c.nx, c.ny, c.nz)
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				if _, err := RenderVolume(b.TempDir(), v.Phase, v.NX, v.NY, v.NZ, v.VoxelUM, Options{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
