package render

import (
	"bufio"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"os"
	"path/filepath"
)

// WriteFileAtomic writes a file so that readers never see it half
// written: write fills a temporary file in the same folder, which is synced
// to disk, closed and renamed over path, so the file is either absent, the
// old version, or complete. On any error the temporary file is removed and
// path is untouched. Every gelspace output goes through it.
func WriteFileAtomic(path string, write func(w io.Writer) error) (err error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	defer func() {
		if err != nil {
			f.Close()
			os.Remove(tmp)
		}
	}()
	bw := bufio.NewWriterSize(f, 1<<16)
	if err = write(bw); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = bw.Flush(); err != nil {
		return fmt.Errorf("writing %s: %w", path, err)
	}
	if err = f.Sync(); err != nil {
		return fmt.Errorf("syncing %s: %w", path, err)
	}
	if err = f.Close(); err != nil {
		return fmt.Errorf("closing %s: %w", path, err)
	}
	if err = os.Chmod(tmp, 0o644); err != nil {
		return err
	}
	return os.Rename(tmp, path)
}

// WritePNG writes img to path atomically.
func WritePNG(path string, img image.Image) error {
	return WriteFileAtomic(path, func(w io.Writer) error { return EncodePNG(w, img) })
}

// EncodePNG writes img as PNG with fast compression. An RGBA image of at
// most 256 distinct colours — every slice and 3D view — is written
// paletted, losslessly: the PNG encoder does not filter paletted rows,
// which makes it several times faster, and the files are smaller.
func EncodePNG(w io.Writer, img image.Image) error {
	if rgba, ok := img.(*image.RGBA); ok {
		if pm := exactPaletted(rgba); pm != nil {
			return pngEnc.Encode(w, pm)
		}
	}
	return pngEnc.Encode(w, img)
}

// exactPaletted returns img as a paletted image of its own colours, in
// order of first appearance, or nil when it has more than 256.
func exactPaletted(img *image.RGBA) *image.Paletted {
	b := img.Bounds()
	idx := make(map[uint32]uint8, 64)
	var pal color.Palette
	pm := image.NewPaletted(b, nil)
	var last uint32
	var lastI uint8
	haveLast := false
	for y := b.Min.Y; y < b.Max.Y; y++ {
		o := img.PixOffset(b.Min.X, y)
		po := pm.PixOffset(b.Min.X, y)
		for x := 0; x < b.Dx(); x++ {
			p := img.Pix[o+4*x : o+4*x+4 : o+4*x+4]
			key := uint32(p[0])<<24 | uint32(p[1])<<16 | uint32(p[2])<<8 | uint32(p[3])
			if !haveLast || key != last {
				i, ok := idx[key]
				if !ok {
					if len(pal) == 256 {
						return nil
					}
					i = uint8(len(pal))
					idx[key] = i
					pal = append(pal, color.RGBA{p[0], p[1], p[2], p[3]})
				}
				last, lastI, haveLast = key, i, true
			}
			pm.Pix[po+x] = lastI
		}
	}
	pm.Palette = pal
	return pm
}

// pngEnc favours speed: slices are flat colour and compress well anyway.
var pngEnc = png.Encoder{CompressionLevel: png.BestSpeed}

// Options controls RenderVolume. The zero value renders the middle slice of
// each of the three planes in both looks, and the 3D view in both looks.
type Options struct {
	// Looks to render; nil means both LookPhase and LookBSE.
	Looks []Look
	// Planes to slice; nil means xy, xz and yz.
	Planes []Plane
	// Positions gives the slice position (voxels along the normal) per
	// plane; a plane missing from the map is cut through the middle.
	Positions map[Plane]int
	// PixelsPerVoxel, LegendAll, ShowAge and AgeH are as in SliceOptions.
	PixelsPerVoxel int
	LegendAll      bool
	ShowAge        bool
	AgeH           float64
	// NoCutAway skips the 3D view.
	NoCutAway bool
	// Prefix starts every file name (e.g. "t0024h_").
	Prefix string
}

// SliceFileName returns the file name RenderVolume uses for a slice:
// prefix + "slice_xy_z050_phase.png".
func SliceFileName(prefix string, p Plane, pos int, look Look) string {
	_, _, an := p.axes()
	return fmt.Sprintf("%sslice_%s_%s%03d_%s.png", prefix, p, an, pos, look)
}

// RenderVolume writes slice images and the 3D view of a volume into dir
// (which must exist) and returns the paths written, in order. phase is
// indexed x + nx*(y + ny*z); a length that does not match the dimensions is
// a caller bug and panics.
func RenderVolume(dir string, phase []uint8, nx, ny, nz int, voxelUM float64, opt Options) ([]string, error) {
	v := Volume{Phase: phase, NX: nx, NY: ny, NZ: nz, VoxelUM: voxelUM}
	if err := v.check(); err != nil {
		return nil, err
	}
	looks := opt.Looks
	if looks == nil {
		looks = []Look{LookPhase, LookBSE}
	}
	planes := opt.Planes
	if planes == nil {
		planes = []Plane{PlaneXY, PlaneXZ, PlaneYZ}
	}
	var out []string
	for _, pl := range planes {
		if pl > PlaneYZ {
			return out, fmt.Errorf("render: plane %d: must be PlaneXY (0), PlaneXZ (1) or PlaneYZ (2)", uint8(pl))
		}
		_, _, n := v.PlaneSize(pl)
		pos, ok := opt.Positions[pl]
		if !ok {
			pos = n / 2
		}
		for _, look := range looks {
			img, err := RenderSlice(v, pl, pos, SliceOptions{Look: look, PixelsPerVoxel: opt.PixelsPerVoxel,
				LegendAll: opt.LegendAll, ShowAge: opt.ShowAge, AgeH: opt.AgeH})
			if err != nil {
				return out, err
			}
			path := filepath.Join(dir, SliceFileName(opt.Prefix, pl, pos, look))
			if err := WritePNG(path, img); err != nil {
				return out, err
			}
			out = append(out, path)
		}
	}
	if !opt.NoCutAway {
		for _, look := range looks {
			img, err := RenderCutAway(v, CutAwayOptions{Look: look, LegendAll: opt.LegendAll, ShowAge: opt.ShowAge, AgeH: opt.AgeH})
			if err != nil {
				return out, err
			}
			path := filepath.Join(dir, fmt.Sprintf("%scutaway_%s.png", opt.Prefix, look))
			if err := WritePNG(path, img); err != nil {
				return out, err
			}
			out = append(out, path)
		}
	}
	return out, nil
}
