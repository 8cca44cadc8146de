package render

import (
	"fmt"
	"image"
	"image/color"
	"image/gif"
	"io"
	"math"
)

// Frame is one time step of a time-lapse: the simulated age and either the
// whole volume (NX·NY·NZ ids) or the slice alone (w·h ids, indexed as
// Volume.Extract returns them).
type Frame struct {
	AgeH  float64
	Phase []uint8
}

// Time-lapse timing, in hundredths of a second.
const (
	FrameDelayCS     = 80
	LastFrameDelayCS = 250
)

// WriteTimeLapse writes an animated GIF of the slice of the given plane and
// position through frames, in the order given. The legend lists the phases
// present in any frame (or all, with opt.LegendAll) so that it stays put;
// the header shows each frame's age. opt.ShowAge and opt.AgeH are ignored.
// The GIF palette holds the colours of every phase of the table (or their
// greys), the fallback colours of unknown ids present, and a grey ramp for
// text, so phase colours come through exactly.
//
// A frame whose length is neither the box nor the slice size is a caller
// bug and panics.
func WriteTimeLapse(w io.Writer, frames []Frame, nx, ny, nz int, voxelUM float64, plane Plane, pos int, opt SliceOptions) error {
	if len(frames) == 0 {
		return fmt.Errorf("render: time-lapse with no frames: need at least 1")
	}
	v := Volume{NX: nx, NY: ny, NZ: nz, VoxelUM: voxelUM}
	if nx < 1 || ny < 1 || nz < 1 {
		return fmt.Errorf("render: box %d×%d×%d: each edge must be at least 1 voxel", nx, ny, nz)
	}
	if !(voxelUM > 0) || math.IsInf(voxelUM, 0) {
		return fmt.Errorf("render: voxel size %g µm must be finite and > 0", voxelUM)
	}
	if err := checkSliceOptions(&opt); err != nil {
		return err
	}
	sw, sh, n := v.PlaneSize(plane)
	if pos < 0 || pos >= n {
		_, _, an := plane.axes()
		return fmt.Errorf("render: %s slice at %s = %d: position must be in 0..%d", plane, an, pos, n-1)
	}
	slices := make([][]uint8, len(frames))
	var all counts
	for i, f := range frames {
		if !(f.AgeH >= 0) {
			return fmt.Errorf("render: time-lapse frame %d: age %g h must be ≥ 0", i, f.AgeH)
		}
		switch len(f.Phase) {
		case nx * ny * nz:
			fv := Volume{Phase: f.Phase, NX: nx, NY: ny, NZ: nz, VoxelUM: voxelUM}
			d, _, _, err := fv.Extract(plane, pos)
			if err != nil {
				return err
			}
			slices[i] = d
		case sw * sh:
			slices[i] = f.Phase
		default:
			panic(fmt.Sprintf("render: time-lapse frame %d has %d ids; want %d (box) or %d (slice)", i, len(f.Phase), nx*ny*nz, sw*sh))
		}
		all.add(slices[i])
	}
	ids := legendIDs(&all, opt.LegendAll)
	pal := timeLapsePalette(opt.Look, &all)
	anim := &gif.GIF{LoopCount: 0}
	var idx map[color.RGBA]uint8
	for i, d := range slices {
		o := opt
		o.ShowAge, o.AgeH = true, frames[i].AgeH
		img := drawSlice(d, sw, sh, voxelUM, plane, pos, ids, o)
		pm, m := toPaletted(img, pal, idx)
		idx = m
		anim.Image = append(anim.Image, pm)
		delay := FrameDelayCS
		if i == len(slices)-1 {
			delay = LastFrameDelayCS
		}
		anim.Delay = append(anim.Delay, delay)
	}
	// Every frame has the same legend and so the same size.
	b := anim.Image[0].Bounds()
	anim.Config = image.Config{ColorModel: pal, Width: b.Dx(), Height: b.Dy()}
	return gif.EncodeAll(w, anim)
}

// timeLapsePalette returns white, the phase colours under look (all table
// phases plus the unknown ids present) and a grey ramp, at most 256 entries.
func timeLapsePalette(look Look, present *counts) color.Palette {
	seen := map[color.RGBA]bool{}
	var pal color.Palette
	add := func(c color.RGBA) {
		if !seen[c] && len(pal) < 256 {
			seen[c] = true
			pal = append(pal, c)
		}
	}
	add(color.RGBA{0xff, 0xff, 0xff, 0xff})
	add(color.RGBA{0, 0, 0, 0xff})
	t := newLUT(look)
	for id := 0; id < 256; id++ {
		if present[id] > 0 {
			add(t[id])
		}
	}
	for id := 0; id < 256; id++ {
		if PhaseLabel(uint8(id)) != fmt.Sprintf("id %d", id) {
			add(t[id])
		}
	}
	// Grey ramp for anti-aliased text and lines.
	for g := 0; g < 256; g += 8 {
		add(color.RGBA{uint8(g), uint8(g), uint8(g), 0xff})
	}
	return pal
}

// toPaletted maps img onto pal, exact colours directly and others to the
// nearest entry, caching the mapping in idx (nil to start a new cache).
func toPaletted(img *image.RGBA, pal color.Palette, idx map[color.RGBA]uint8) (*image.Paletted, map[color.RGBA]uint8) {
	if idx == nil {
		idx = make(map[color.RGBA]uint8, len(pal)*2)
		for i, c := range pal {
			idx[c.(color.RGBA)] = uint8(i)
		}
	}
	b := img.Bounds()
	pm := image.NewPaletted(b, pal)
	var last color.RGBA
	var lastI uint8
	haveLast := false
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			o := img.PixOffset(x, y)
			c := color.RGBA{img.Pix[o], img.Pix[o+1], img.Pix[o+2], img.Pix[o+3]}
			if haveLast && c == last {
				pm.Pix[pm.PixOffset(x, y)] = lastI
				continue
			}
			i, ok := idx[c]
			if !ok {
				i = uint8(pal.Index(c))
				idx[c] = i
			}
			last, lastI, haveLast = c, i, true
			pm.Pix[pm.PixOffset(x, y)] = i
		}
	}
	return pm, idx
}
