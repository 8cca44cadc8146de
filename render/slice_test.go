package render

import (
	"bytes"
	"flag"
	"image"
	"image/color"
	"image/gif"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gelspace/kinetics"
)

var update = flag.Bool("update", false, "rewrite the golden images in testdata/render")

const goldenDir = "../testdata/render"

// checkGolden compares img pixel by pixel with the golden PNG; on a
// mismatch it writes the image beside the golden as NAME.got.png.
func checkGolden(t *testing.T, name string, img image.Image) {
	t.Helper()
	path := filepath.Join(goldenDir, name+".png")
	if *update {
		if err := WritePNG(path, img); err != nil {
			t.Fatal(err)
		}
		return
	}
	f, err := os.Open(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	defer f.Close()
	want, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	got := path[:len(path)-len(".png")] + ".got.png"
	if !want.Bounds().Eq(img.Bounds()) {
		WritePNG(got, img)
		t.Fatalf("%s: size %v, golden %v; wrote %s", name, img.Bounds(), want.Bounds(), got)
	}
	b := img.Bounds()
	bad := 0
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r1, g1, b1, a1 := img.At(x, y).RGBA()
			r2, g2, b2, a2 := want.At(x, y).RGBA()
			if r1 != r2 || g1 != g2 || b1 != b2 || a1 != a2 {
				bad++
			}
		}
	}
	if bad > 0 {
		WritePNG(got, img)
		t.Errorf("%s: %d pixels differ from the golden; wrote %s", name, bad, got)
	} else {
		os.Remove(got)
	}
}

// tinyVolume is a 9×7×5 box that holds every phase of the table and the
// unknown id 77, at known places: voxel (x, y, z) holds phase number
// (x + y + z) mod (len(table)+1), the last number standing for id 77.
func tinyVolume() Volume {
	ps := kinetics.Phases()
	v := Volume{NX: 9, NY: 7, NZ: 5, VoxelUM: 0.5, Phase: make([]uint8, 9*7*5)}
	for z := 0; z < v.NZ; z++ {
		for y := 0; y < v.NY; y++ {
			for x := 0; x < v.NX; x++ {
				k := (x + 2*y + 3*z) % (len(ps) + 1)
				id := uint8(77)
				if k < len(ps) {
					id = ps[k].ID
				}
				v.Phase[x+v.NX*(y+v.NY*z)] = id
			}
		}
	}
	return v
}

func TestSliceGolden(t *testing.T) {
	v := tinyVolume()
	for _, look := range []Look{LookPhase, LookBSE} {
		for _, pl := range []Plane{PlaneXY, PlaneXZ, PlaneYZ} {
			img, err := RenderSlice(v, pl, 2, SliceOptions{Look: look, PixelsPerVoxel: 24, ShowAge: true, AgeH: 72})
			if err != nil {
				t.Fatal(err)
			}
			checkGolden(t, "slice_"+pl.String()+"_"+look.String(), img)
		}
	}
}

func TestCutAwayGolden(t *testing.T) {
	v := tinyVolume()
	for _, look := range []Look{LookPhase, LookBSE} {
		img, err := RenderCutAway(v, CutAwayOptions{Look: look, BoxPX: 320})
		if err != nil {
			t.Fatal(err)
		}
		checkGolden(t, "cutaway_"+look.String(), img)
	}
}

// voxelPixel returns the centre pixel of the voxel at image-plane (u, t)
// in a slice drawn with ppv pixels per voxel, h voxels high.
func voxelPixel(u, tt, h, ppv int) (int, int) {
	return int(marginPX) + u*ppv + ppv/2, int(marginPX+headerPX) + (h-1-tt)*ppv + ppv/2
}

func TestPixelAtKnownVoxel(t *testing.T) {
	v := tinyVolume()
	at := func(x, y, z int) uint8 { return v.Phase[x+v.NX*(y+v.NY*z)] }
	const ppv = 12
	for _, look := range []Look{LookPhase, LookBSE} {
		for _, c := range []struct {
			pl      Plane
			pos     int
			x, y, z int
			u, tt   int
		}{
			{PlaneXY, 3, 5, 2, 3, 5, 2},
			{PlaneXZ, 4, 1, 4, 2, 1, 2},
			{PlaneYZ, 6, 6, 3, 4, 3, 4},
			{PlaneYZ, 0, 0, 0, 0, 0, 0},
		} {
			img, err := RenderSlice(v, c.pl, c.pos, SliceOptions{Look: look, PixelsPerVoxel: ppv})
			if err != nil {
				t.Fatal(err)
			}
			_, h, _ := v.PlaneSize(c.pl)
			px, py := voxelPixel(c.u, c.tt, h, ppv)
			id := at(c.x, c.y, c.z)
			if got, want := img.RGBAAt(px, py), PhaseColour(id, look); got != want {
				t.Errorf("%s %s at %d, voxel (%d,%d,%d) id %d: pixel (%d,%d) is %v; want %v", look, c.pl, c.pos, c.x, c.y, c.z, id, px, py, got, want)
			}
		}
	}
	// The unknown id is drawn in its fallback colour.
	one := Volume{NX: 1, NY: 1, NZ: 1, VoxelUM: 1, Phase: []uint8{250}}
	img, err := RenderSlice(one, PlaneXY, 0, SliceOptions{PixelsPerVoxel: 8})
	if err != nil {
		t.Fatal(err)
	}
	px, py := voxelPixel(0, 0, 1, 8)
	if got, want := img.RGBAAt(px, py), FallbackColour(250); got != want {
		t.Errorf("unknown id 250 drawn %v; want fallback %v", got, want)
	}
}

func TestScaleBar(t *testing.T) {
	for _, c := range []struct{ w, want float64 }{{100, 20}, {50, 10}, {200, 50}, {4.5, 1}, {8, 2}, {1000, 200}, {0.3, 0.05}} {
		if got := ScaleBarUM(c.w); got < c.want*(1-1e-9) || got > c.want*(1+1e-9) {
			t.Errorf("ScaleBarUM(%g) = %g; want %g", c.w, got, c.want)
		}
	}
	// The bar in the image is barUM/voxelUM·ppv pixels long: count black
	// pixels on its middle row.
	v := Volume{NX: 60, NY: 40, NZ: 3, VoxelUM: 0.5, Phase: make([]uint8, 60*40*3)}
	for i := range v.Phase {
		v.Phase[i] = kinetics.CSHOuter
	}
	img, err := RenderSlice(v, PlaneXY, 1, SliceOptions{PixelsPerVoxel: 10})
	if err != nil {
		t.Fatal(err)
	}
	y := int(marginPX+headerPX) + 40*10 + 22 + barThickPX/2
	n := 0
	for x := 0; x < img.Bounds().Dx(); x++ {
		if img.RGBAAt(x, y) == (color.RGBA{0, 0, 0, 0xff}) {
			n++
		} else if n > 0 {
			break
		}
	}
	// 60 voxels × 0.5 µm = 30 µm wide → a 5 µm bar = 10 voxels = 100 px.
	if n != 100 {
		t.Errorf("scale bar is %d px long; want 100 (5 µm at 0.5 µm/voxel, 10 px/voxel)", n)
	}
}

func TestAutoPixelsPerVoxel(t *testing.T) {
	for _, n := range []int{50, 64, 100, 150, 200} {
		w := n * AutoPixelsPerVoxel(n, n)
		if w < 600 || w > 800 {
			t.Errorf("box %d: slice %d px wide; want 600–800", n, w)
		}
	}
}

func TestExtractMatchesNaive(t *testing.T) {
	v := tinyVolume()
	for _, pl := range []Plane{PlaneXY, PlaneXZ, PlaneYZ} {
		_, _, n := v.PlaneSize(pl)
		for pos := 0; pos < n; pos++ {
			d, w, h, err := v.Extract(pl, pos)
			if err != nil {
				t.Fatal(err)
			}
			for tt := 0; tt < h; tt++ {
				for u := 0; u < w; u++ {
					var x, y, z int
					switch pl {
					case PlaneXY:
						x, y, z = u, tt, pos
					case PlaneXZ:
						x, y, z = u, pos, tt
					case PlaneYZ:
						x, y, z = pos, u, tt
					}
					if got, want := d[u+w*tt], v.Phase[x+v.NX*(y+v.NY*z)]; got != want {
						t.Fatalf("%s at %d (%d,%d): %d; want %d", pl, pos, u, tt, got, want)
					}
				}
			}
		}
	}
}

func TestBadInputs(t *testing.T) {
	v := tinyVolume()
	if _, err := RenderSlice(v, PlaneXY, 5, SliceOptions{}); err == nil || !strings.Contains(err.Error(), "0..4") {
		t.Errorf("position 5 of 5: err %v; want the range 0..4", err)
	}
	bad := v
	bad.VoxelUM = 0
	if _, err := RenderSlice(bad, PlaneXY, 0, SliceOptions{}); err == nil {
		t.Error("voxel size 0: no error")
	}
	if _, err := RenderCutAway(v, CutAwayOptions{BoxPX: 10}); err == nil || !strings.Contains(err.Error(), "64..4096") {
		t.Errorf("BoxPX 10: err %v", err)
	}
	defer func() {
		if r := recover(); r == nil || !strings.HasPrefix(r.(string), "render: ") {
			t.Errorf("length mismatch: recovered %v; want a render: panic", r)
		}
	}()
	short := v
	short.Phase = short.Phase[:10]
	RenderSlice(short, PlaneXY, 0, SliceOptions{})
}

func TestTimeLapse(t *testing.T) {
	v := tinyVolume()
	// Frame 1 is the volume, frame 2 the xz slice at y = 3 alone, shifted.
	d, w, h, _ := v.Extract(PlaneXZ, 3)
	shifted := make([]uint8, len(d))
	for i := range d {
		shifted[i] = d[(i+1)%len(d)]
	}
	var buf bytes.Buffer
	frames := []Frame{{AgeH: 1, Phase: v.Phase}, {AgeH: 24, Phase: shifted}}
	if err := WriteTimeLapse(&buf, frames, v.NX, v.NY, v.NZ, v.VoxelUM, PlaneXZ, 3, SliceOptions{PixelsPerVoxel: 10}); err != nil {
		t.Fatal(err)
	}
	g, err := gif.DecodeAll(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if len(g.Image) != 2 || g.Delay[0] != FrameDelayCS || g.Delay[1] != LastFrameDelayCS {
		t.Fatalf("%d frames, delays %v", len(g.Image), g.Delay)
	}
	for k, data := range [][]uint8{d, shifted} {
		for _, uv := range [][2]int{{0, 0}, {4, 2}, {w - 1, h - 1}} {
			px, py := voxelPixel(uv[0], uv[1], h, 10)
			r, gg, b, _ := g.Image[k].At(px, py).RGBA()
			want := PhaseColour(data[uv[0]+w*uv[1]], LookPhase)
			if uint8(r>>8) != want.R || uint8(gg>>8) != want.G || uint8(b>>8) != want.B {
				t.Errorf("frame %d voxel %v: %d,%d,%d; want %v", k, uv, r>>8, gg>>8, b>>8, want)
			}
		}
	}
	if err := WriteTimeLapse(&buf, nil, 2, 2, 2, 1, PlaneXY, 0, SliceOptions{}); err == nil {
		t.Error("no frames: no error")
	}
}

func TestRenderVolumeFiles(t *testing.T) {
	dir := t.TempDir()
	v := tinyVolume()
	out, err := RenderVolume(dir, v.Phase, v.NX, v.NY, v.NZ, v.VoxelUM, Options{PixelsPerVoxel: 6})
	if err != nil {
		t.Fatal(err)
	}
	if len(out) != 3*2+2 {
		t.Errorf("wrote %d files; want 8: %v", len(out), out)
	}
	if want := filepath.Join(dir, "slice_xz_y003_bse.png"); out[3] != want {
		t.Errorf("file 3 is %s; want %s", out[3], want)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != len(out) {
		t.Errorf("folder holds %d entries; want %d (no temporary files left)", len(ents), len(out))
	}
	for _, p := range out {
		f, err := os.Open(p)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := png.Decode(f); err != nil {
			t.Errorf("%s: %v", p, err)
		}
		f.Close()
	}
	if _, err := RenderVolume(filepath.Join(dir, "missing"), v.Phase, v.NX, v.NY, v.NZ, v.VoxelUM, Options{}); err == nil {
		t.Error("missing folder: no error")
	}
}

// One slice-position convention: index k and the voxel centres at
// (k + 0.5)·h µm.
func TestSliceTitleConvention(t *testing.T) {
	for _, c := range []struct {
		pl   Plane
		pos  int
		h    float64
		want string
	}{
		{PlaneXY, 20, 1, "xy slice at z = 20 (voxel centres at 20.5 µm)"},
		{PlaneXZ, 2, 0.5, "xz slice at y = 2 (voxel centres at 1.25 µm)"},
		{PlaneYZ, 0, 2, "yz slice at x = 0 (voxel centres at 1 µm)"},
	} {
		if got := SliceTitle(c.pl, c.pos, c.h); got != c.want {
			t.Errorf("SliceTitle(%s, %d, %g) = %q; want %q", c.pl, c.pos, c.h, got, c.want)
		}
	}
}
