package render

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"github.com/fogleman/gg"
)

// CutAwayOptions controls the 3D view. The zero value draws phase colours,
// 640 px across the box, with the corner octant cut away.
type CutAwayOptions struct {
	Look Look
	// BoxPX is the width of the drawn box in pixels; 0 means 640.
	BoxPX int
	// NoCut draws the closed box instead of cutting away the octant at the
	// far corner (x ≥ NX/2, y ≥ NY/2, z ≥ NZ/2).
	NoCut     bool
	LegendAll bool
	ShowAge   bool
	AgeH      float64
	Title     string
}

// Face shading of the 3D view: the colour of a voxel face is its phase
// colour times the factor of the face's outward normal.
const (
	ShadeTop = 1.00 // faces facing +z
	ShadeX   = 0.80 // faces facing +x
	ShadeY   = 0.62 // faces facing +y
)

// maxBoxHeight bounds the drawn height of the 3D view, in units of its
// width (CutAwayOptions.BoxPX); a cube's view is 2/√3 ≈ 1.15 widths high.
const maxBoxHeight = 1.25

// iso is the isometric projection used by the 3D view: world (x, y, z) in
// voxels maps to screen (u, v) in pixels, v downwards, looking along −(1,1,1)
// so that the faces x = NX, y = NY and z = NZ are in view.
type iso struct {
	s, u0, v0 float64
}

const cos30 = 0.8660254037844386

func (p iso) project(x, y, z float64) (u, v float64) {
	return p.u0 + (x-y)*cos30*p.s, p.v0 + ((x+y)/2-z)*p.s
}

// facePiece is a visible rectangle of the cut box: the plane axis = at,
// with the other two coordinates in [lo, hi), seen from the + side.
type facePiece struct {
	axis   int // 0 x, 1 y, 2 z: the normal
	at     float64
	lo, hi [3]float64 // bounds of the two in-plane coordinates (normal entry unused)
	layer  int        // voxel layer on the normal axis drawn on this face
}

// pieces returns the visible face pieces of the box, cut or not.
func pieces(nx, ny, nz int, cut bool) []facePiece {
	n := [3]float64{float64(nx), float64(ny), float64(nz)}
	full := func(axis int) facePiece {
		f := facePiece{axis: axis, at: n[axis], layer: int(n[axis]) - 1}
		f.hi = n
		return f
	}
	if !cut {
		return []facePiece{full(0), full(1), full(2)}
	}
	c := [3]float64{math.Floor(n[0] / 2), math.Floor(n[1] / 2), math.Floor(n[2] / 2)}
	var ps []facePiece
	for axis := 0; axis < 3; axis++ {
		a, b := (axis+1)%3, (axis+2)%3
		// The outer face minus the quadrant a ≥ c[a], b ≥ c[b]: two pieces.
		p := full(axis)
		p.hi[a] = c[a]
		ps = append(ps, p)
		p = full(axis)
		p.lo[a], p.hi[b] = c[a], c[b]
		ps = append(ps, p)
		// The inner wall of the notch at c[axis].
		in := facePiece{axis: axis, at: c[axis], layer: int(c[axis]) - 1}
		in.lo[a], in.lo[b] = c[a], c[b]
		in.hi = n
		ps = append(ps, in)
	}
	return ps
}

// RenderCutAway draws a shaded isometric view of the box with its far corner
// octant cut away, a legend of the phases on the visible faces, and the box
// edge lengths.
func RenderCutAway(v Volume, opt CutAwayOptions) (*image.RGBA, error) {
	if err := v.check(); err != nil {
		return nil, err
	}
	if opt.Look > LookBSE {
		return nil, fmt.Errorf("render: look %d: must be LookPhase (0) or LookBSE (1)", uint8(opt.Look))
	}
	if opt.BoxPX == 0 {
		opt.BoxPX = 640
	}
	if opt.BoxPX < 64 || opt.BoxPX > 4096 {
		return nil, fmt.Errorf("render: 3D view %d px wide: must be in 64..4096 (0 = 640)", opt.BoxPX)
	}
	if opt.ShowAge && !(opt.AgeH >= 0) {
		return nil, fmt.Errorf("render: age %g h: must be ≥ 0", opt.AgeH)
	}
	cut := !opt.NoCut && v.NX >= 2 && v.NY >= 2 && v.NZ >= 2
	nx, ny, nz := float64(v.NX), float64(v.NY), float64(v.NZ)
	// The box fits BoxPX across and maxBoxHeight × BoxPX down, so that
	// the image, and the time to draw it, stay bounded whatever the
	// box's aspect ratio (a 1×1×1000 column is drawn as a tall thin
	// prism, not 370 000 px high). A cube is limited by its width.
	s := math.Min(float64(opt.BoxPX)/((nx+ny)*cos30), maxBoxHeight*float64(opt.BoxPX)/((nx+ny)/2+nz))
	boxH := ((nx+ny)/2 + nz) * s
	top := marginPX + headerPX + 10
	p := iso{s: s, u0: marginPX + 30 + ny*cos30*s, v0: top + nz*s}
	boxW := float64(opt.BoxPX)

	// Paint the faces into a box-sized buffer, counting visible phases.
	t := newLUT(opt.Look)
	ps := pieces(v.NX, v.NY, v.NZ, cut)
	var c counts
	fs := newFonts()
	probe := gg.NewContext(1, 1)
	// The legend lists the phases seen on the faces, so the faces are
	// painted first into a buffer and copied into the final image.
	bw, bh := int(math.Ceil(marginPX+30+boxW+120)), int(math.Ceil(top+boxH+30+marginPX))
	faces := image.NewRGBA(image.Rect(0, 0, bw, bh))
	shade := [3]float64{ShadeX, ShadeY, ShadeTop}
	nn := [3]int{v.NX, v.NY, v.NZ}
	for py := 0; py < bh; py++ {
		for px := 0; px < bw; px++ {
			// Ray through the pixel centre: the points with z = 0 and the
			// direction (1, 1, 1).
			A := (float64(px) + 0.5 - p.u0) / (cos30 * s) // x − y
			B := 2 * (float64(py) + 0.5 - p.v0) / s       // x + y − 2z at z = 0
			o := [3]float64{(A + B) / 2, (B - A) / 2, 0}
			bestT := math.Inf(-1)
			var id uint8
			axis := -1
			for _, f := range ps {
				tt := f.at - o[f.axis]
				var q [3]float64
				ok := true
				for k := 0; k < 3; k++ {
					q[k] = o[k] + tt
					if k != f.axis && (q[k] < f.lo[k] || q[k] >= f.hi[k]) {
						ok = false
						break
					}
				}
				if !ok || tt <= bestT {
					continue
				}
				var ix [3]int
				for k := 0; k < 3; k++ {
					if k == f.axis {
						ix[k] = f.layer
					} else {
						ix[k] = min(int(q[k]), nn[k]-1)
					}
				}
				bestT, axis = tt, f.axis
				id = v.Phase[ix[0]+v.NX*(ix[1]+v.NY*ix[2])]
			}
			if axis < 0 {
				continue
			}
			c[id]++
			col := t[id]
			k := shade[axis]
			faces.SetRGBA(px, py, color.RGBA{uint8(float64(col.R)*k + 0.5), uint8(float64(col.G)*k + 0.5), uint8(float64(col.B)*k + 0.5), 0xff})
		}
	}

	total := float64(c.total())
	leg := newLegend(probe, fs, opt.Look, legendIDs(&c, opt.LegendAll),
		func(id uint8) float64 { return 100 * float64(c[id]) / total }, "Phase (visible area %)")
	width := int(math.Ceil(float64(bw) + legendGap + leg.W + marginPX))
	height := max(bh, int(math.Ceil(top+leg.H+marginPX)))
	img := image.NewRGBA(image.Rect(0, 0, width, height))
	dc := gg.NewContextForRGBA(img)
	dc.SetColor(color.White)
	dc.Clear()
	// Copy the painted faces over the white background.
	for y := 0; y < bh; y++ {
		for x := 0; x < bw; x++ {
			if o := faces.PixOffset(x, y); faces.Pix[o+3] != 0 {
				copy(img.Pix[img.PixOffset(x, y):img.PixOffset(x, y)+4], faces.Pix[o:o+4])
			}
		}
	}

	// Edges: the silhouette, the three edges that run from the near
	// corner (cut short by the notch), and the walls of the notch.
	dc.SetColor(color.RGBA{0x20, 0x20, 0x20, 0xff})
	dc.SetLineWidth(1.2)
	poly := func(pts ...[3]float64) {
		for i, q := range pts {
			u, w := p.project(q[0], q[1], q[2])
			if i == 0 {
				dc.MoveTo(u, w)
			} else {
				dc.LineTo(u, w)
			}
		}
	}
	poly([3]float64{0, 0, nz}, [3]float64{nx, 0, nz}, [3]float64{nx, 0, 0}, [3]float64{nx, ny, 0},
		[3]float64{0, ny, 0}, [3]float64{0, ny, nz})
	dc.ClosePath()
	dc.Stroke()
	cx, cy, cz := nx, ny, nz
	if cut {
		cx, cy, cz = math.Floor(nx/2), math.Floor(ny/2), math.Floor(nz/2)
	}
	poly([3]float64{nx, ny, 0}, [3]float64{nx, ny, cz})
	poly([3]float64{nx, 0, nz}, [3]float64{nx, cy, nz})
	poly([3]float64{0, ny, nz}, [3]float64{cx, ny, nz})
	dc.Stroke()
	if cut {
		// Each notch wall is the piece with lo = c on both in-plane axes.
		for _, f := range ps {
			a, b := (f.axis+1)%3, (f.axis+2)%3
			if f.at == [3]float64{nx, ny, nz}[f.axis] {
				continue
			}
			corner := func(ua, ub float64) [3]float64 {
				var q [3]float64
				q[f.axis], q[a], q[b] = f.at, ua, ub
				return q
			}
			poly(corner(f.lo[a], f.lo[b]), corner(f.hi[a], f.lo[b]), corner(f.hi[a], f.hi[b]), corner(f.lo[a], f.hi[b]))
			dc.ClosePath()
			dc.Stroke()
		}
	}

	// Axis labels along the three edges that meet at the bottom corners.
	fs.set(dc, fs.text)
	dc.SetColor(color.Black)
	lx, ly := p.project(nx/2, ny, 0)
	dc.DrawStringAnchored(fmt.Sprintf("x: %s µm", fmtNum(nx*v.VoxelUM)), lx-12, ly+14, 1, 0.5)
	lx, ly = p.project(nx, ny/2, 0)
	dc.DrawStringAnchored(fmt.Sprintf("y: %s µm", fmtNum(ny*v.VoxelUM)), lx+12, ly+14, 0, 0.5)
	lx, ly = p.project(nx, 0, nz/2)
	dc.DrawStringAnchored(fmt.Sprintf("z: %s µm", fmtNum(nz*v.VoxelUM)), lx+10, ly, 0, 0.5)

	// Header.
	title := opt.Title
	if title == "" {
		title = "3D view, corner octant cut away"
		if !cut {
			title = "3D view"
		}
	}
	fs.set(dc, fs.title)
	dc.DrawString(title, marginPX, marginPX+16)
	fs.set(dc, fs.text)
	sub := fmt.Sprintf("%d × %d × %d voxels of %s µm", v.NX, v.NY, v.NZ, fmtNum(v.VoxelUM))
	if opt.ShowAge {
		sub = "age " + fmtAge(opt.AgeH) + "  ·  " + sub
	}
	if opt.Look == LookBSE {
		sub += "  ·  BSE-like grey"
	}
	dc.SetColor(color.Gray{0x30})
	dc.DrawString(sub, marginPX, marginPX+38)

	leg.draw(dc, float64(bw)+legendGap, top, fs)
	return img, nil
}
