package fit

import (
	"bytes"
	"errors"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gelspace/configs"
	"gelspace/configs/fuzzmut"
)

// FuzzMeasured fuzzes the reader of measured calorimetry curves. `go
// test` runs the seeds; GELSPACE_LONG=1 runs the body a million times on
// deterministic mutations of them (TestFuzzLong).

func measuredSeeds(t testing.TB) [][]byte {
	out := [][]byte{
		[]byte("time_h,heat_j_per_g\n1,2\n2,5\n4,20\n8,80\n24,200\n"),
		[]byte("# flow\ntime_h,heat_flow_mw_per_g,comment\n0.5,1.2,a\n1,0.8,b\n2,0.6,c\n4,1.5,d\n8,3.2,e\n12,2.1,f\n"),
		[]byte("alpha,time_h\n0.01,1\n0.05,2\n0.2,6\n0.4,12\n0.6,48\n"),
		[]byte("time_h,heat_j_per_g\n1,2\n2,1\n3,4\n4,5\n5,6\n"),
		// found by the long run: a quote inside a field made the reader
		// ask csv.Reader.FieldPos for a field it did not have (a panic)
		[]byte("time_h,heat_j_per_g\n1,2\n2type=\"Int64\",,6\n"),
	}
	for _, n := range []string{"rw-g-heat-20c.csv", "rw-g-flow-20c.csv", "rw-g-alpha-20c.csv"} {
		data, err := os.ReadFile(filepath.Join("..", "..", "..", "testdata", "fit", n))
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, data)
	}
	return out
}

// fuzzMeasured: a curve is refused with an *InputError, or read into at
// least 5 rows with finite, increasing, positive times and finite values
// (cumulative ones never decreasing).
func fuzzMeasured(t testing.TB, data []byte) {
	m, err := ParseMeasured("m.csv", bytes.NewReader(data))
	if err != nil {
		var ie *configs.InputError
		if !errors.As(err, &ie) {
			t.Errorf("error of type %T: %v", err, err)
		}
		return
	}
	if len(m.TimeH) < 5 || len(m.TimeH) != len(m.Value) {
		t.Errorf("accepted %d times and %d values", len(m.TimeH), len(m.Value))
		return
	}
	for i, x := range m.TimeH {
		v := m.Value[i]
		if !(x > 0) || math.IsInf(x, 0) || i > 0 && !(x > m.TimeH[i-1]) || math.IsNaN(v) || math.IsInf(v, 0) {
			t.Errorf("accepted row %d: %g h, %g", i, x, v)
			return
		}
		if m.Kind != KindFlow && i > 0 && v < m.Value[i-1] {
			t.Errorf("accepted a decreasing cumulative curve at row %d", i)
			return
		}
	}
}

func FuzzMeasured(f *testing.F) {
	for _, s := range measuredSeeds(f) {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, data []byte) { fuzzMeasured(t, data) })
}

// TestFuzzLong runs the body on a million mutated inputs (GELSPACE_FUZZ_N
// changes the count); GELSPACE_LONG=1 only.
func TestFuzzLong(t *testing.T) {
	if os.Getenv("GELSPACE_LONG") == "" {
		t.Skip("long: set GELSPACE_LONG=1")
	}
	fuzzmut.Run(t, 5, measuredSeeds(t), fuzzmut.Execs(1_000_000), func(data []byte) { fuzzMeasured(t, data) })
}
