package voxel

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
)

// PSD is a particle size distribution by mass (equivalently by volume: all
// grains of a powder are given one density): Passing(x) is the fraction of
// the powder finer than size x µm, from 0 to 1.
//
// It is either a Rosin–Rammler law,
//
//	R(x) = exp(−(x/x′)^n),  Passing(x) = 1 − R(x)
//
// with R the mass fraction retained above x (RRSB form, DIN 66145), or a
// measured table interpolated linearly in passing
// against log size between its rows, linearly from (0, 0) to the first row.
type PSD struct {
	rrXUM, rrN float64 // Rosin–Rammler parameters when rrN > 0

	sizesUM []float64 // table rows, strictly increasing
	passing []float64 // cumulative fraction, non-decreasing, last = 1
}

// RosinRammler returns the PSD with characteristic size xUM (µm, the size
// with 36.8 % retained) and uniformity n. It needs 0 < xUM ≤ 1000 and
// 0.3 ≤ n ≤ 5.
func RosinRammler(xUM, n float64) (*PSD, error) {
	if !(xUM > 0 && xUM <= 1000) {
		return nil, fmt.Errorf("Rosin–Rammler x′ = %g µm: must be > 0 and ≤ 1000", xUM)
	}
	if !(n >= 0.3 && n <= 5) {
		return nil, fmt.Errorf("Rosin–Rammler n = %g: must be between 0.3 and 5", n)
	}
	return &PSD{rrXUM: xUM, rrN: n}, nil
}

// NewPSDTable returns the PSD of a measured table: sizes in µm, strictly
// increasing and > 0; cumulative passing percent in [0, 100],
// non-decreasing, with the last row at least 99 % (it is scaled to 100 %:
// instruments round). At least two rows.
func NewPSDTable(sizesUM, passingPercent []float64) (*PSD, error) {
	return newPSDTable(sizesUM, passingPercent, func(i int) string { return fmt.Sprintf("PSD row %d", i+1) })
}

// newPSDTable is NewPSDTable with row names for messages.
func newPSDTable(sizesUM, passingPercent []float64, row func(i int) string) (*PSD, error) {
	if len(sizesUM) != len(passingPercent) {
		panic("voxel: NewPSDTable: sizes and passing differ in length")
	}
	if len(sizesUM) < 2 {
		return nil, fmt.Errorf("PSD table has %d rows: need at least 2", len(sizesUM))
	}
	p := &PSD{sizesUM: append([]float64(nil), sizesUM...), passing: make([]float64, len(sizesUM))}
	for i, x := range sizesUM {
		q := passingPercent[i]
		if !(x > 0) || math.IsInf(x, 0) {
			return nil, fmt.Errorf("%s: size_um = %g: must be > 0", row(i), x)
		}
		if i > 0 && !(x > sizesUM[i-1]) {
			return nil, fmt.Errorf("%s: size_um = %g after %g: sizes must increase strictly", row(i), x, sizesUM[i-1])
		}
		if !(q >= 0 && q <= 100) {
			return nil, fmt.Errorf("%s: passing_percent = %g: must be between 0 and 100", row(i), q)
		}
		if i > 0 && q < passingPercent[i-1] {
			return nil, fmt.Errorf("%s: passing_percent = %g after %g: cumulative passing must not decrease", row(i), q, passingPercent[i-1])
		}
	}
	last := passingPercent[len(passingPercent)-1]
	if last < 99 {
		return nil, fmt.Errorf("%s: passing_percent = %g at %g µm: the table must reach 100 (at least 99) at its coarsest size", row(len(sizesUM)-1), last, sizesUM[len(sizesUM)-1])
	}
	for i, q := range passingPercent {
		p.passing[i] = q / last
	}
	return p, nil
}

// ReadPSDTable reads a CSV table with the header size_um,passing_percent
// (cumulative percent finer, as laser-diffraction instruments export; the
// columns may come in either order, other columns are ignored, lines
// starting with # are comments). Errors name the row and the allowed
// range.
func ReadPSDTable(r io.Reader) (*PSD, error) {
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	head, err := cr.Read()
	if err == io.EOF {
		return nil, errors.New("PSD table is empty: need a header size_um,passing_percent and rows")
	}
	if err != nil {
		return nil, fmt.Errorf("PSD table: %v", err)
	}
	is, ip := -1, -1
	for i, h := range head {
		switch strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")) {
		case "size_um":
			is = i
		case "passing_percent":
			ip = i
		}
	}
	if is < 0 || ip < 0 {
		return nil, fmt.Errorf("PSD table header %q: need columns size_um and passing_percent", excerpt(strings.Join(head, ",")))
	}
	var sizes, pass []float64
	var lines []int
	for {
		rec, err := cr.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("PSD table: %v", err)
		}
		row, _ := cr.FieldPos(0)
		if len(rec) <= is || len(rec) <= ip {
			return nil, fmt.Errorf("PSD table line %d: %d fields, need columns %d and %d", row, len(rec), is+1, ip+1)
		}
		x, err1 := strconv.ParseFloat(strings.TrimSpace(rec[is]), 64)
		q, err2 := strconv.ParseFloat(strings.TrimSpace(rec[ip]), 64)
		if err1 != nil || err2 != nil {
			return nil, fmt.Errorf("PSD table line %d: %q, %q: size_um and passing_percent must be numbers", row, excerpt(rec[is]), excerpt(rec[ip]))
		}
		sizes = append(sizes, x)
		pass = append(pass, q)
		lines = append(lines, row)
	}
	return newPSDTable(sizes, pass, func(i int) string { return fmt.Sprintf("line %d", lines[i]) })
}

// Passing returns the mass fraction finer than xUM.
func (p *PSD) Passing(xUM float64) float64 {
	if xUM <= 0 {
		return 0
	}
	if p.rrN > 0 {
		return -math.Expm1(-math.Pow(xUM/p.rrXUM, p.rrN))
	}
	s := p.sizesUM
	if xUM >= s[len(s)-1] {
		return 1
	}
	if xUM <= s[0] {
		return p.passing[0] * xUM / s[0]
	}
	i := sort.SearchFloat64s(s, xUM) // s[i-1] < x ≤ s[i]
	t := math.Log(xUM/s[i-1]) / math.Log(s[i]/s[i-1])
	return p.passing[i-1] + t*(p.passing[i]-p.passing[i-1])
}

// QuantileUM returns the size in µm at which the passing fraction reaches
// q (0 < q < 1), by bisection on Passing.
func (p *PSD) QuantileUM(q float64) float64 {
	if !(q > 0 && q < 1) {
		panic(fmt.Sprintf("voxel: QuantileUM: q = %g must be in (0, 1)", q))
	}
	lo, hi := 0.0, p.MaxSizeUM()
	for p.Passing(hi) < q {
		hi *= 2
	}
	for i := 0; i < 100; i++ {
		mid := (lo + hi) / 2
		if p.Passing(mid) < q {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2
}

// RRFit is a Rosin–Rammler law fitted to a measured table.
type RRFit struct {
	XUM float64 // characteristic size x′, µm (36.8 % retained)
	N   float64 // uniformity n
	// R2 is the coefficient of determination of the straight line in the
	// RRSB plot, ln(−ln R) against ln x.
	R2 float64
	// MaxDevPercent is the largest difference, in passing percent points,
	// between the fitted law and the table rows used.
	MaxDevPercent float64
	Rows          int // table rows used: those with 0.1 % < passing < 99.9 %
}

// FitRosinRammler fits the Rosin–Rammler law to the rows of a measured
// table by least squares on the RRSB plot (DIN 66145), where the law is the
// straight line
//
//	ln(−ln R(x)) = n ln x − n ln x′
//
// with R = 1 − passing. Rows with passing at or below 0.1 % or at or above
// 99.9 % carry no weight there and are left out; at least two rows must
// remain. For a Rosin–Rammler PSD it returns its own parameters.
func (p *PSD) FitRosinRammler() (RRFit, error) {
	if p.rrN > 0 {
		return RRFit{XUM: p.rrXUM, N: p.rrN, R2: 1}, nil
	}
	var xs, ys []float64
	for i, x := range p.sizesUM {
		if f := p.passing[i]; f > 0.001 && f < 0.999 {
			xs = append(xs, math.Log(x))
			ys = append(ys, math.Log(-math.Log1p(-f)))
		}
	}
	if len(xs) < 2 {
		return RRFit{}, fmt.Errorf("PSD table has %d rows between 0.1 %% and 99.9 %% passing: need 2 for a Rosin–Rammler fit", len(xs))
	}
	var mx, my float64
	for i := range xs {
		mx += xs[i]
		my += ys[i]
	}
	mx /= float64(len(xs))
	my /= float64(len(xs))
	var sxx, sxy, syy float64
	for i := range xs {
		dx, dy := xs[i]-mx, ys[i]-my
		sxx += dx * dx
		sxy += dx * dy
		syy += dy * dy
	}
	if sxx == 0 {
		return RRFit{}, errors.New("PSD table rows share one size: no Rosin–Rammler fit")
	}
	n := sxy / sxx
	if !(n > 0) {
		return RRFit{}, fmt.Errorf("PSD table: RRSB slope %g is not positive", n)
	}
	fit := RRFit{N: n, XUM: math.Exp(mx - my/n), R2: 1, Rows: len(xs)}
	if syy > 0 {
		fit.R2 = sxy * sxy / (sxx * syy)
	}
	for i, x := range p.sizesUM {
		if f := p.passing[i]; f > 0.001 && f < 0.999 {
			law := -math.Expm1(-math.Pow(x/fit.XUM, fit.N))
			fit.MaxDevPercent = math.Max(fit.MaxDevPercent, 100*math.Abs(law-f))
		}
	}
	return fit, nil
}

// MedianUM returns the mass-weighted median size d50 in µm.
func (p *PSD) MedianUM() float64 { return p.QuantileUM(0.5) }

// MaxSizeUM returns the coarsest size of a table, or for Rosin–Rammler the
// size with 10⁻⁶ retained.
func (p *PSD) MaxSizeUM() float64 {
	if p.rrN > 0 {
		return p.rrXUM * math.Pow(-math.Log(1e-6), 1/p.rrN)
	}
	return p.sizesUM[len(p.sizesUM)-1]
}

// SurfaceCutoffUM is the smallest size counted in SpecificSurfaceM2PerKg
// for a Rosin–Rammler law (whose surface diverges at x → 0 for n ≤ 1): the
// mass finer than it is counted as spheres of this size. A table is
// integrated from its first row, the mass below it counted at half that
// size. Both are gelspace conventions.
const SurfaceCutoffUM = 0.1

// SpecificSurfaceM2PerKg returns the specific surface of the powder taken
// as smooth spheres of density densityGPerCM3:
//
//	S = ∫ 6 / (ρ x) dPassing(x),  in m²/kg = 6000 / (ρ[g/cm³] · x[µm])
//
// integrated numerically on a log grid.
func (p *PSD) SpecificSurfaceM2PerKg(densityGPerCM3 float64) float64 {
	if !(densityGPerCM3 > 0) {
		panic(fmt.Sprintf("voxel: SpecificSurfaceM2PerKg: density %g must be > 0", densityGPerCM3))
	}
	lo := SurfaceCutoffUM
	if p.rrN == 0 {
		lo = p.sizesUM[0]
	}
	hi := p.MaxSizeUM()
	// mass below lo at lo (RR) or lo/2 (table)
	xlo := lo
	if p.rrN == 0 {
		xlo = lo / 2
	}
	s := p.Passing(lo) / xlo
	const steps = 4000
	r := math.Log(hi / lo)
	prevX, prevP := lo, p.Passing(lo)
	for i := 1; i <= steps; i++ {
		x := lo * math.Exp(r*float64(i)/steps)
		q := p.Passing(x)
		s += (q - prevP) / math.Sqrt(x*prevX) // geometric midpoint
		prevX, prevP = x, q
	}
	return 6000 / densityGPerCM3 * s
}

// String describes the PSD in one line.
func (p *PSD) String() string {
	if p.rrN > 0 {
		return fmt.Sprintf("Rosin–Rammler x′ = %g µm, n = %g", p.rrXUM, p.rrN)
	}
	return fmt.Sprintf("table of %d rows, %g to %g µm", len(p.sizesUM), p.sizesUM[0], p.sizesUM[len(p.sizesUM)-1])
}

// Classes is a PSD digitised for a box: the solid volume shared among
// digitised spheres of diameter 1, 2, …, MaxDiameter voxels. Class d holds
// the sizes from (d − ½) to (d + ½) voxel edges; class 1 also holds
// everything finer (FinerThanVoxel is reported separately).
type Classes struct {
	VoxelUM     float64
	MaxDiameter int // voxels

	// Fraction[d] is the volume fraction of the solid in class d (index 0
	// unused), after truncation, summing to 1.
	Fraction []float64

	// FinerThanVoxel is the input's fraction finer than one voxel edge; it
	// is merged into class 1 (single-voxel particles).
	FinerThanVoxel float64

	// Truncated is the input's fraction coarser than MaxDiameter + ½
	// voxels: not packed (Fraction is of the rest) but carried by the
	// engine as coarse grains outside the lattice (CoarseTail,
	// Engine.Carry).
	Truncated float64
}

// MaxTruncated is the largest coarse fraction Classes leaves to be
// carried outside the lattice: a powder whose bulk is coarser than the box
// can hold is refused (the box would no longer show its microstructure).
const MaxTruncated = 0.5

// Classes digitises the PSD for voxels of voxelUM µm in a box whose
// shortest edge is boxVoxels. The coarsest diameter is half the shortest
// edge (gelspace's rule: a grain at most half the box keeps the periodic
// images of one grain from facing each other across a gap smaller than
// itself); the coarser tail is left to be carried (CoarseTail) and reported. It fails when more
// than MaxTruncated of the powder is coarser, or the box is under 2 voxels.
func (p *PSD) Classes(voxelUM float64, boxVoxels int) (*Classes, error) {
	if !(voxelUM > 0) {
		return nil, fmt.Errorf("voxel size %g µm: must be > 0", voxelUM)
	}
	dmax := boxVoxels / 2
	if dmax < 1 {
		return nil, fmt.Errorf("box of %d voxels holds no particle: need at least 2 voxels per edge", boxVoxels)
	}
	c := &Classes{VoxelUM: voxelUM, MaxDiameter: dmax, Fraction: make([]float64, dmax+1)}
	top := p.Passing((float64(dmax) + 0.5) * voxelUM)
	c.Truncated = 1 - top
	c.FinerThanVoxel = p.Passing(voxelUM)
	if c.Truncated > MaxTruncated {
		return nil, fmt.Errorf("%.0f %% of the powder is coarser than %g µm, the largest particle a %d-voxel box of %g µm voxels holds (half its edge): enlarge box.voxels or box.voxel_um (at most %.0f %% may be carried outside the box)",
			100*c.Truncated, (float64(dmax)+0.5)*voxelUM, boxVoxels, voxelUM, 100*MaxTruncated)
	}
	prev := 0.0
	for d := 1; d <= dmax; d++ {
		q := p.Passing((float64(d) + 0.5) * voxelUM)
		c.Fraction[d] = (q - prev) / top
		prev = q
	}
	return c, nil
}

// MedianDiameter returns the volume-weighted median class diameter in
// voxels: the smallest d whose cumulative fraction reaches ½.
func (c *Classes) MedianDiameter() int {
	s := 0.0
	for d := 1; d <= c.MaxDiameter; d++ {
		s += c.Fraction[d]
		if s >= 0.5 {
			return d
		}
	}
	return c.MaxDiameter
}

// SpecificSurfaceM2PerKg returns the specific surface of the digitised
// particles, each class as isolated digitised spheres, from their exposed
// voxel faces: S = faces · a² / (voxels · a³ · ρ) = 1000 · faces /
// (voxels · a[µm] · ρ[g/cm³]) m²/kg. Voxel faces overstate a smooth
// sphere's area (by about 1.5 for large spheres).
func (c *Classes) SpecificSurfaceM2PerKg(densityGPerCM3 float64) float64 {
	s := 0.0
	for d := 1; d <= c.MaxDiameter; d++ {
		if c.Fraction[d] == 0 {
			continue
		}
		v, f := sphereSize(d)
		s += c.Fraction[d] * float64(f) / float64(v)
	}
	return 1000 * s / (c.VoxelUM * densityGPerCM3)
}

// Counts returns the number of particles per class (index = diameter) for
// a population of targetVoxels solid voxels, such that Σ count[d] ·
// SphereVoxels(d) = targetVoxels exactly. Counts are rounded from the
// coarsest class down, each class taking up the rounding left by the
// coarser ones, never overshooting; single-voxel particles close the sum.
func (c *Classes) Counts(targetVoxels int) []int {
	if targetVoxels < 0 {
		panic(fmt.Sprintf("voxel: Counts: target %d voxels < 0", targetVoxels))
	}
	n := make([]int, c.MaxDiameter+1)
	placed := 0
	cum := 0.0 // cumulative fraction from the coarsest class down
	for d := c.MaxDiameter; d >= 1; d-- {
		cum += c.Fraction[d]
		v := sphereVolume(d)
		want := cum*float64(targetVoxels) - float64(placed)
		k := int(math.Floor(want/float64(v) + 0.5))
		if k < 0 {
			k = 0
		}
		if room := (targetVoxels - placed) / v; k > room {
			k = room
		}
		if d == 1 {
			k = targetVoxels - placed
		}
		n[d] = k
		placed += k * v
	}
	return n
}

// SphereVoxels returns the number of voxels in the digitised sphere of
// diameter d voxels (see Pack for the rule).
func SphereVoxels(d int) int { return sphereVolume(d) }
