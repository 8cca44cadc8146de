package run

import (
	"math"
	"math/rand/v2"
	"testing"
)

// synthetic returns a heat-flow curve sampled every 0.25 h to untilH:
// a decaying heat of wetting, a main peak and optionally a second one,
// all Gaussian in time, on a small constant flow.
func synthetic(untilH float64, second func(t float64) float64) (t, q []float64) {
	for x := 0.125; x <= untilH; x += 0.25 {
		v := 0.1 + 6*math.Exp(-x/0.4) + 3*math.Exp(-0.5*math.Pow((x-10)/3, 2))
		if second != nil {
			v += second(x)
		}
		t, q = append(t, x), append(q, v)
	}
	return t, q
}

// argExtremum scans f on a fine grid in [a, b] for its minimum (sign +1)
// or maximum (sign −1): the known extrema of the noise-free curve.
func argExtremum(f func(float64) float64, a, b, sign float64) float64 {
	best, arg := math.Inf(1), a
	for x := a; x <= b; x += 1e-3 {
		if v := sign * f(x); v < best {
			best, arg = v, x
		}
	}
	return arg
}

// TestFindLandmarks checks the landmarks against synthetic heat-flow
// curves whose extrema are known: the dormant minimum and the main peak
// within one sample interval plus the smoothing's shift; a distinct second
// peak found as a second peak, an overlapping one as a shoulder, and no
// sulfate depletion on a curve without one.
func TestFindLandmarks(t *testing.T) {
	const tol = 0.3 // h: a sample interval plus the moving average's shift
	base := func(x float64) float64 {
		return 0.1 + 6*math.Exp(-x/0.4) + 3*math.Exp(-0.5*math.Pow((x-10)/3, 2))
	}
	for _, c := range []struct {
		name     string
		second   func(float64) float64
		wantSulf float64 // NaN: none
		shoulder bool
		sulfTol  float64
	}{
		{name: "single peak", wantSulf: math.NaN()},
		{name: "second peak", second: func(x float64) float64 { return 2 * math.Exp(-0.5*math.Pow((x-17)/1, 2)) }, wantSulf: 17, sulfTol: tol},
		// A small overlapping bump on the decline: a shoulder, found where
		// the slope of the noise-free curve has its local maximum (13.64 h).
		{name: "shoulder", second: func(x float64) float64 { return 1.4 * math.Exp(-0.5*math.Pow((x-15)/1.5, 2)) }, wantSulf: 13.64, shoulder: true, sulfTol: 0.75},
	} {
		t.Run(c.name, func(t *testing.T) {
			ts, q := synthetic(72, c.second)
			f := func(x float64) float64 {
				v := base(x)
				if c.second != nil {
					v += c.second(x)
				}
				return v
			}
			lm := FindLandmarks(ts, q)
			if lm.Peak < 0 || lm.Dormant < 0 {
				t.Fatalf("no peak or dormant minimum: %+v", lm)
			}
			wantMin := argExtremum(f, 0.5, 10, 1)
			wantPeak := argExtremum(f, wantMin, 12, -1)
			if math.Abs(ts[lm.Dormant]-wantMin) > tol+SmoothHalfWidthH {
				t.Errorf("dormant minimum at %g h, want %.2f h", ts[lm.Dormant], wantMin)
			}
			if math.Abs(ts[lm.Peak]-wantPeak) > tol {
				t.Errorf("main peak at %g h, want %.2f h", ts[lm.Peak], wantPeak)
			}
			if h := lm.Smooth[lm.Peak]; math.Abs(h-f(wantPeak)) > 0.02*f(wantPeak) {
				t.Errorf("main peak height %.4f, want %.4f within 2 %%", h, f(wantPeak))
			}
			switch {
			case math.IsNaN(c.wantSulf) && lm.Sulfate >= 0:
				t.Errorf("sulfate depletion found at %g h on a curve without one", ts[lm.Sulfate])
			case !math.IsNaN(c.wantSulf) && lm.Sulfate < 0:
				t.Errorf("no sulfate depletion found, want %g h", c.wantSulf)
			case !math.IsNaN(c.wantSulf):
				if math.Abs(ts[lm.Sulfate]-c.wantSulf) > c.sulfTol || lm.Shoulder != c.shoulder {
					t.Errorf("sulfate depletion at %g h (shoulder %v), want %g h (shoulder %v)", ts[lm.Sulfate], lm.Shoulder, c.wantSulf, c.shoulder)
				}
			}
		})
	}
}

// Noise of ±5 % of the main peak on a curve without a second peak (as
// the default 96³ box gives: ±0.15 mW/g on a 4 mW/g peak) neither moves the main peak by more than the tolerance
// nor makes a sulfate depletion (fixed seed).
func TestFindLandmarksNoise(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 11))
	for trial := 0; trial < 50; trial++ {
		ts, q := synthetic(72, nil)
		for i := range q {
			q[i] += 0.15 * (2*rng.Float64() - 1)
		}
		lm := FindLandmarks(ts, q)
		if lm.Peak < 0 || math.Abs(ts[lm.Peak]-10) > 1 {
			t.Errorf("trial %d: main peak %+v", trial, lm.Peak)
		}
		if lm.Sulfate >= 0 {
			t.Errorf("trial %d: sulfate depletion at %g h from noise alone", trial, ts[lm.Sulfate])
		}
		// The same noise on a curve with a second peak at 17 h.
		ts, q = synthetic(72, func(x float64) float64 { return 2 * math.Exp(-0.5*math.Pow((x-17)/1, 2)) })
		for i := range q {
			q[i] += 0.15 * (2*rng.Float64() - 1)
		}
		if lm := FindLandmarks(ts, q); lm.Sulfate < 0 || math.Abs(ts[lm.Sulfate]-17) > 1 {
			t.Errorf("trial %d: second peak at 17 h: found %d", trial, lm.Sulfate)
		}
	}
}

// A curve still rising at the end of the run has a dormant minimum but no
// main peak; a falling one has neither.
func TestFindLandmarksEdges(t *testing.T) {
	ts, q := synthetic(8, nil)
	lm := FindLandmarks(ts, q)
	if lm.Peak >= 0 || lm.Dormant < 0 {
		t.Errorf("rising at the end: %+v", lm)
	}
	var tf, qf []float64
	for x := 0.125; x < 24; x += 0.25 {
		tf, qf = append(tf, x), append(qf, math.Exp(-x))
	}
	if lm := FindLandmarks(tf, qf); lm.Peak >= 0 || lm.Dormant >= 0 || lm.Sulfate >= 0 {
		t.Errorf("falling curve: %+v", lm)
	}
}

// The heat at the standard ages is interpolated on the cumulative heat,
// nil past the run.
func TestHeatAt(t *testing.T) {
	rows := [][]float64{}
	for _, tq := range [][2]float64{{6, 60}, {12, 150}, {30, 240}} {
		r := make([]float64, nHead)
		r[colTime], r[colHeat] = tq[0], tq[1]
		rows = append(rows, r)
	}
	if q := heatAt(rows, 3); q == nil || *q != 30 {
		t.Errorf("heat at 3 h: %v, want 30", q)
	}
	if q := heatAt(rows, 24); q == nil || *q != 210 {
		t.Errorf("heat at 24 h: %v, want 210", q)
	}
	if q := heatAt(rows, 48); q != nil {
		t.Errorf("heat at 48 h past the run: %v", *q)
	}
}
