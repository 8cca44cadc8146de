package render

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// Series is a time-series table with the columns of series.csv: one row per
// output time, missing values NaN.
type Series struct {
	Columns []string
	Rows    [][]float64 // Rows[i][j] is row i of column Columns[j]
}

// Index returns the position of the named column, or -1.
func (s *Series) Index(name string) int {
	for j, c := range s.Columns {
		if c == name {
			return j
		}
	}
	return -1
}

// Column returns a copy of the named column, or nil if there is none.
func (s *Series) Column(name string) []float64 {
	j := s.Index(name)
	if j < 0 {
		return nil
	}
	out := make([]float64, len(s.Rows))
	for i, r := range s.Rows {
		out[i] = r[j]
	}
	return out
}

// ReadSeriesCSV reads a series table: a header row of column names, then one
// row of numbers per output time. Empty cells and NaN, nan, NA or null read as
// NaN. Every row must have as many cells as the header.
func ReadSeriesCSV(r io.Reader) (*Series, error) {
	cr := csv.NewReader(r)
	cr.TrimLeadingSpace = true
	cr.Comment = '#'
	cr.FieldsPerRecord = 0
	head, err := cr.Read()
	if errors.Is(err, io.EOF) {
		return nil, fmt.Errorf("render: series table is empty: need a header row")
	}
	if err != nil {
		return nil, fmt.Errorf("render: series table: %w", err)
	}
	s := &Series{}
	seen := map[string]bool{}
	for _, h := range head {
		h = strings.TrimSpace(h)
		if h == "" || seen[h] {
			return nil, fmt.Errorf("render: series header: column %q is empty or repeated", h)
		}
		seen[h] = true
		s.Columns = append(s.Columns, h)
	}
	for line := 2; ; line++ {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("render: series table: %w", err)
		}
		row := make([]float64, len(rec))
		for j, cell := range rec {
			cell = strings.TrimSpace(cell)
			switch strings.ToLower(cell) {
			case "", "nan", "na", "null":
				row[j] = math.NaN()
				continue
			}
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				return nil, fmt.Errorf("render: series row %d, column %s: %q is not a number (empty or NaN for missing)", line, s.Columns[j], cell)
			}
			row[j] = v
		}
		s.Rows = append(s.Rows, row)
	}
	return s, nil
}

// At returns the value of column name at time timeH (column time_h) by
// linear interpolation between the neighbouring rows whose values are both
// present, and false when timeH is outside the rows' time range or the
// column is missing there.
func (s *Series) At(name string, timeH float64) (float64, bool) {
	ti, j := s.Index("time_h"), s.Index(name)
	if ti < 0 || j < 0 {
		return math.NaN(), false
	}
	var pt, pv float64
	have := false
	for _, r := range s.Rows {
		t, v := r[ti], r[j]
		if math.IsNaN(t) || math.IsNaN(v) {
			continue
		}
		if t == timeH {
			return v, true
		}
		if have && pt < timeH && t > timeH {
			return pv + (v-pv)*(timeH-pt)/(t-pt), true
		}
		pt, pv, have = t, v, true
	}
	return math.NaN(), false
}
