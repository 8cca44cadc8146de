package voxel

import (
	"math"
	"strings"
	"testing"
)

func TestRosinRammler(t *testing.T) {
	// RRSB form (DIN 66145, confirmed): R(x′) = e⁻¹, so 63.2 % passes
	// at x′ whatever n; d50 = x′ (ln 2)^(1/n).
	p, err := RosinRammler(14, 1.05)
	if err != nil {
		t.Fatal(err)
	}
	if got := p.Passing(14); math.Abs(got-(1-math.Exp(-1))) > 1e-12 {
		t.Fatalf("Passing(x′) = %g", got)
	}
	if got, want := p.MedianUM(), 14*math.Pow(math.Ln2, 1/1.05); math.Abs(got-want) > 1e-6 {
		t.Fatalf("d50 %g, want %g", got, want)
	}
	for _, bad := range [][2]float64{{0, 1}, {-3, 1}, {10, 0.1}, {10, 9}, {math.NaN(), 1}} {
		if _, err := RosinRammler(bad[0], bad[1]); err == nil {
			t.Errorf("RosinRammler%v accepted", bad)
		}
	}
}

func TestSpecificSurfaceSpheres(t *testing.T) {
	// Monosize spheres of 10 µm, ρ 3.15: S = 6/(ρ d) = 190.5 m²/kg (exact).
	p, err := NewPSDTable([]float64{9.999, 10}, []float64{0, 100})
	if err != nil {
		t.Fatal(err)
	}
	if got := p.SpecificSurfaceM2PerKg(3.15); math.Abs(got-6000/(3.15*10)) > 0.5 {
		t.Fatalf("monosize surface %g, want %g", got, 6000/(3.15*10))
	}
	// A typical Portland cement (x′ 10–30 µm, n 0.8–1.2) as spheres is
	// a few hundred m²/kg: Blaine 300–450 m²/kg (memory / common practice);
	// sphere and Blaine surfaces differ, so the band is wide.
	rr, _ := RosinRammler(14, 1.05)
	if s := rr.SpecificSurfaceM2PerKg(3.15); s < 200 || s > 900 {
		t.Fatalf("RR surface %g m²/kg outside 200–900", s)
	}
}

var psdTableCases = []struct {
	name, csv string
	ok        bool
}{
	{"good", "size_um,passing_percent\n1,5\n2,10\n10,50\n50,100\n", true},
	{"reordered with comment", "# laser\npassing_percent,size_um,extra\n5,1,a\n100,40,b\n", true},
	{"rounded end", "size_um,passing_percent\n1,5\n40,99.5\n", true},
	{"not monotone", "size_um,passing_percent\n1,5\n2,4\n40,100\n", false},
	{"sizes not increasing", "size_um,passing_percent\n2,5\n1,10\n40,100\n", false},
	{"passing over 100", "size_um,passing_percent\n1,5\n40,120\n", false},
	{"passing negative", "size_um,passing_percent\n1,-5\n40,100\n", false},
	{"does not reach 100", "size_um,passing_percent\n1,5\n40,80\n", false},
	{"bad header", "size,pass\n1,5\n40,100\n", false},
	{"not a number", "size_um,passing_percent\n1,five\n40,100\n", false},
	{"one row", "size_um,passing_percent\n40,100\n", false},
	{"empty", "", false},
	{"zero size", "size_um,passing_percent\n0,0\n40,100\n", false},
}

func TestReadPSDTable(t *testing.T) {
	for _, c := range psdTableCases {
		p, err := ReadPSDTable(strings.NewReader(c.csv))
		if (err == nil) != c.ok {
			t.Errorf("%s: err = %v, want ok=%v", c.name, err, c.ok)
			continue
		}
		if err == nil {
			if p.Passing(1e6) != 1 || p.Passing(0) != 0 {
				t.Errorf("%s: ends %g %g", c.name, p.Passing(0), p.Passing(1e6))
			}
		}
	}
	p, _ := ReadPSDTable(strings.NewReader(psdTableCases[0].csv))
	// log-linear interpolation: halfway in log between 2 and 10 µm
	if got := p.Passing(math.Sqrt(20)); math.Abs(got-0.30) > 1e-12 {
		t.Fatalf("interpolated passing %g, want 0.30", got)
	}
	if got := p.MedianUM(); math.Abs(got-10) > 1e-6 {
		t.Fatalf("table d50 %g, want 10", got)
	}
}

func FuzzPSDTable(f *testing.F) {
	for _, c := range psdTableCases {
		f.Add(c.csv)
	}
	f.Fuzz(func(t *testing.T, s string) {
		p, err := ReadPSDTable(strings.NewReader(s))
		if err != nil {
			return
		}
		prev := 0.0
		for _, x := range []float64{0.1, 1, 3, 10, 30, 100, 1000} {
			q := p.Passing(x)
			if !(q >= prev && q <= 1) {
				t.Fatalf("Passing(%g) = %g after %g", x, q, prev)
			}
			prev = q
		}
		if c, err := p.Classes(1, 50); err == nil {
			sum := 0.0
			for _, f := range c.Fraction {
				sum += f
			}
			if math.Abs(sum-1) > 1e-9 {
				t.Fatalf("class fractions sum to %g", sum)
			}
		}
	})
}

func TestClasses(t *testing.T) {
	p, _ := RosinRammler(14, 1.05)
	c, err := p.Classes(1, 100)
	if err != nil {
		t.Fatal(err)
	}
	if c.MaxDiameter != 50 {
		t.Fatalf("max diameter %d, want 50 (half the box)", c.MaxDiameter)
	}
	if want := 1 - p.Passing(50.5); math.Abs(c.Truncated-want) > 1e-12 || c.Truncated <= 0 {
		t.Fatalf("truncated %g, want %g", c.Truncated, want)
	}
	if want := p.Passing(1); math.Abs(c.FinerThanVoxel-want) > 1e-12 {
		t.Fatalf("finer %g, want %g", c.FinerThanVoxel, want)
	}
	sum := 0.0
	for _, f := range c.Fraction {
		sum += f
	}
	if math.Abs(sum-1) > 1e-12 {
		t.Fatalf("fractions sum to %g", sum)
	}
	if md := c.MedianDiameter(); math.Abs(float64(md)-p.MedianUM()) > 1 {
		t.Fatalf("class median %d, d50 %g", md, p.MedianUM())
	}
	for _, target := range []int{0, 1, 7, 1000, 123457} {
		n := c.Counts(target)
		got := 0
		for d, k := range n {
			if k < 0 {
				t.Fatalf("negative count")
			}
			if d > 0 {
				got += k * SphereVoxels(d)
			}
		}
		if got != target {
			t.Fatalf("counts for %d voxels sum to %d", target, got)
		}
	}
	// Bulk coarser than the box is refused; a tiny box too.
	coarse, _ := RosinRammler(60, 1)
	if _, err := coarse.Classes(1, 40); err == nil || !strings.Contains(err.Error(), "coarser") {
		t.Fatalf("coarse PSD: %v", err)
	}
	if _, err := p.Classes(1, 1); err == nil {
		t.Fatal("1-voxel box accepted")
	}
	// Digitised surface exceeds the smooth-sphere one (voxel faces
	// overstate area) but stays within a factor 3.
	ss, sd := p.SpecificSurfaceM2PerKg(3.15), c.SpecificSurfaceM2PerKg(3.15)
	if !(sd > 0 && sd < 3*ss) {
		t.Fatalf("digitised %g vs spheres %g m²/kg", sd, ss)
	}
}

func TestFitRosinRammlerRecovers(t *testing.T) {
	// A table made from a known law (x′ 14 µm, n 1.05, in the typical range
	// of Portland cements — common practice) gives the law back.
	for _, c := range []struct{ x, n float64 }{{14, 1.05}, {25, 0.85}, {8, 1.3}} {
		law, _ := RosinRammler(c.x, c.n)
		var sizes, pass []float64
		for _, s := range []float64{0.5, 1, 2, 4, 8, 16, 32, 64, 128, 256} {
			sizes = append(sizes, s)
			pass = append(pass, 100*law.Passing(s))
		}
		pass[len(pass)-1] = 100
		tab, err := NewPSDTable(sizes, pass)
		if err != nil {
			t.Fatal(err)
		}
		fit, err := tab.FitRosinRammler()
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(fit.XUM-c.x) > 1e-6*c.x || math.Abs(fit.N-c.n) > 1e-6 || fit.R2 < 1-1e-9 || fit.MaxDevPercent > 1e-6 {
			t.Errorf("law x′ %g n %g: fit %+v", c.x, c.n, fit)
		}
	}
	// A table that is not Rosin–Rammler shows it in the fit quality.
	tab, _ := NewPSDTable([]float64{1, 2, 3, 10, 30, 60}, []float64{5, 40, 45, 50, 95, 100})
	fit, err := tab.FitRosinRammler()
	if err != nil || fit.R2 > 0.97 || fit.MaxDevPercent < 5 {
		t.Errorf("bimodal table: fit %+v, %v; want a poor fit", fit, err)
	}
	if _, err := (&PSD{sizesUM: []float64{1, 2}, passing: []float64{0, 1}}).FitRosinRammler(); err == nil {
		t.Error("fit from no interior rows accepted")
	}
}
