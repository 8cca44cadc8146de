package sweep

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"github.com/BurntSushi/toml"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
)

// Limits of a sweep file.
const (
	maxSweepPoints     = 100000 // points × replicates
	maxSweepReplicates = 1000
	maxAxisValues      = 10000
)

// Axis is one swept config key.
type Axis struct {
	Key    string    // dotted config key
	Line   int       // line in the sweep file
	Table  string    // "axes" or "zip"
	Values []any     // TOML values
	Text   []string  // the values as short text (CSV cells, labels)
	Num    []float64 // the values as numbers (NaN where not numeric)
}

// Spec is a parsed sweep file.
type Spec struct {
	File       string // the sweep file, for messages
	Name       string // optional label
	Base       string // the base config path (absolute), "" for the embedded default
	Replicates int
	Axes       []*Axis // in column order: file order
	// Fixed are the [set] keys: one value for every point.
	Fixed []Fixed
	// Dims lists, per dimension, the indices into Axes that vary with it
	// (one for a crossed axis, several for the zip group).
	Dims [][]int
}

// Fixed is a key of [set]: a value given to every point.
type Fixed struct {
	Key   string
	Line  int
	Value any
}

// Point is one run of a sweep: a combination of axis values and a
// replicate.
type Point struct {
	Name      string // pNNNN_rR, the folder under points/
	Point     int    // index of the axis combination
	Replicate int    // 0, 1, …
	Seed      int64
	Values    []int  // per axis, the index of its value
	Config    []byte // the resolved config.toml
}

// configHash is the hex SHA-256 of a point's config.toml and the version:
// the completion marker holds it.
func configHash(config []byte) string {
	h := sha256.New()
	h.Write([]byte("gelspace " + run.Version + "\n"))
	h.Write(config)
	return hex.EncodeToString(h.Sum(nil))
}

// NumPoints is the number of axis combinations.
func (s *Spec) NumPoints() int {
	n := 1
	for _, d := range s.Dims {
		n *= len(s.Axes[d[0]].Values)
	}
	return n
}

// valueIndices returns, for axis combination p, the value index of every
// axis (row-major, first dimension slowest).
func (s *Spec) valueIndices(p int) []int {
	idx := make([]int, len(s.Axes))
	for d := len(s.Dims) - 1; d >= 0; d-- {
		n := len(s.Axes[s.Dims[d][0]].Values)
		k := p % n
		p /= n
		for _, a := range s.Dims[d] {
			idx[a] = k
		}
	}
	return idx
}

// Load reads and checks a sweep file. Errors are *configs.InputError naming
// the file, the line and the key.
func Load(path string) (*Spec, error) {
	data, err := configs.ReadInput(path, "sweep file")
	if err != nil {
		return nil, err
	}
	return Parse(path, data)
}

// Parse parses the text of a sweep file named path (relative paths in
// it are read from path's folder).
func Parse(path string, data []byte) (*Spec, error) {
	tree := map[string]any{}
	md, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&tree)
	if err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &configs.InputError{File: path, Line: pe.Position.Line, Msg: "malformed TOML: " + pe.Message}
		}
		return nil, &configs.InputError{File: path, Msg: "malformed TOML: " + err.Error()}
	}
	lines := configs.KeyLines(data)
	at := func(key, format string, args ...any) *configs.InputError {
		l := 0
		for k := key; k != ""; {
			if n, ok := lines[k]; ok {
				l = n
				break
			}
			i := strings.LastIndexByte(k, '.')
			if i < 0 {
				break
			}
			k = k[:i]
		}
		return &configs.InputError{File: path, Line: l, Key: key, Msg: fmt.Sprintf(format, args...)}
	}
	s := &Spec{File: path, Replicates: 1}
	zipDim := -1
	for _, k := range md.Keys() {
		switch {
		case len(k) == 1:
			switch k[0] {
			case "base":
				b, ok := tree["base"].(string)
				if !ok || b == "" {
					return nil, at("base", "must be the path of a run config (text), relative to the sweep file")
				}
				if !filepath.IsAbs(b) {
					b = filepath.Join(filepath.Dir(path), b)
				}
				if abs, err := filepath.Abs(b); err == nil {
					b = abs
				}
				s.Base = b
			case "replicates":
				r, ok := tree["replicates"].(int64)
				if !ok || r < 1 || r > maxSweepReplicates {
					return nil, at("replicates", "%v: must be a whole number between 1 and %d", tree["replicates"], maxSweepReplicates)
				}
				s.Replicates = int(r)
			case "name":
				n, ok := tree["name"].(string)
				if !ok {
					return nil, at("name", "must be text")
				}
				s.Name = n
			case "axes", "zip", "set":
				if _, ok := tree[k[0]].(map[string]any); !ok {
					return nil, at(k[0], "must be a table of config keys, each with a list of values or { from = , to = , step = }")
				}
			default:
				return nil, at(k[0], "unknown key (known keys: base, replicates, name, set, axes, zip)")
			}
		case len(k) == 2 && k[0] == "set":
			if k[1] == "" || strings.Contains(k[1], "..") || strings.HasPrefix(k[1], ".") || strings.HasSuffix(k[1], ".") {
				return nil, at("set."+k[1], "must be a dotted config key such as \"box.voxels\"")
			}
			s.Fixed = append(s.Fixed, Fixed{Key: k[1], Line: lines["set."+k[1]], Value: tree["set"].(map[string]any)[k[1]]})
		case len(k) > 2 && k[0] == "set":
			// keys of an inline-table value
		case len(k) == 2 && (k[0] == "axes" || k[0] == "zip"):
			key := k[1]
			lineKey := k[0] + "." + key
			for _, a := range s.Axes {
				if a.Key == key {
					return nil, at(lineKey, "already swept in [%s] (line %d): give each config key once", a.Table, a.Line)
				}
			}
			if key == "" || strings.Contains(key, "..") || strings.HasPrefix(key, ".") || strings.HasSuffix(key, ".") {
				return nil, at(lineKey, "must be a dotted config key such as \"mix.w_c\"")
			}
			vals, err := axisValues(tree[k[0]].(map[string]any)[key])
			if err != nil {
				return nil, at(lineKey, "%v", err)
			}
			a := &Axis{Key: key, Line: lines[lineKey], Table: k[0], Values: vals}
			for _, v := range vals {
				a.Text = append(a.Text, valueText(v))
				a.Num = append(a.Num, valueNum(v))
			}
			s.Axes = append(s.Axes, a)
			ai := len(s.Axes) - 1
			if k[0] == "axes" {
				s.Dims = append(s.Dims, []int{ai})
				break
			}
			if zipDim < 0 {
				zipDim = len(s.Dims)
				s.Dims = append(s.Dims, []int{ai})
				break
			}
			first := s.Axes[s.Dims[zipDim][0]]
			if len(vals) != len(first.Values) {
				return nil, at(lineKey, "has %d values but %s (line %d) has %d: the axes of [zip] vary together and need equal lengths", len(vals), first.Key, first.Line, len(first.Values))
			}
			s.Dims[zipDim] = append(s.Dims[zipDim], ai)
		case len(k) > 2 && (k[0] == "axes" || k[0] == "zip"):
			// keys inside a range table or an inline-table value: checked by axisValues
		default:
			return nil, at(strings.Join(k, "."), "unknown key (known keys: base, replicates, name, set, axes, zip)")
		}
	}
	for _, f := range s.Fixed {
		for _, a := range s.Axes {
			if a.Key == f.Key {
				return nil, at("set."+f.Key, "also swept in [%s] (line %d): give each config key once", a.Table, a.Line)
			}
		}
	}
	if len(s.Axes) == 0 && s.Replicates == 1 {
		return nil, &configs.InputError{File: path, Key: "axes", Msg: "nothing to sweep: give [axes] (config keys with lists or ranges) or replicates > 1"}
	}
	if n := s.NumPoints() * s.Replicates; n > maxSweepPoints || n <= 0 {
		return nil, &configs.InputError{File: path, Key: "axes", Msg: fmt.Sprintf("the sweep has %d runs (points × replicates): at most %d", n, maxSweepPoints)}
	}
	return s, nil
}

// axisValues expands an axis: a list of values, or a range table
// { from, to, step } (inclusive; integers when all three are integers).
func axisValues(v any) ([]any, error) {
	switch v := v.(type) {
	case []any:
		if len(v) == 0 {
			return nil, errors.New("empty list: give at least one value")
		}
		if len(v) > maxAxisValues {
			return nil, fmt.Errorf("%d values: at most %d", len(v), maxAxisValues)
		}
		return v, nil
	case []map[string]any:
		out := make([]any, len(v))
		for i := range v {
			out[i] = v[i]
		}
		return out, nil
	case map[string]any:
		for k := range v {
			if k != "from" && k != "to" && k != "step" {
				return nil, fmt.Errorf("range key %q: a range is { from = , to = , step = }", k)
			}
		}
		if len(v) != 3 {
			return nil, errors.New("a range needs from, to and step: { from = 0.35, to = 0.55, step = 0.05 }")
		}
		fi, ok1 := v["from"].(int64)
		ti, ok2 := v["to"].(int64)
		si, ok3 := v["step"].(int64)
		if ok1 && ok2 && ok3 {
			if si <= 0 || ti < fi {
				return nil, fmt.Errorf("range from %d to %d step %d: step must be > 0 and to ≥ from", fi, ti, si)
			}
			n := (ti-fi)/si + 1
			if n > maxAxisValues {
				return nil, fmt.Errorf("range gives %d values: at most %d", n, maxAxisValues)
			}
			var out []any
			for x := fi; x <= ti; x += si {
				out = append(out, x)
			}
			return out, nil
		}
		f, ok1 := number(v["from"])
		t, ok2 := number(v["to"])
		st, ok3 := number(v["step"])
		if !ok1 || !ok2 || !ok3 {
			return nil, errors.New("from, to and step of a range must be numbers")
		}
		return floatRange(f, t, st)
	default:
		return nil, fmt.Errorf("%s: must be a list of values [a, b, …] or a range { from = , to = , step = }", valueText(v))
	}
}

// floatRange returns from, from+step, … up to to inclusive. The count is
// decided with a tolerance of 1e-9 steps, and each value is rounded to 12
// significant digits, so 0.35 to 0.55 by 0.05 gives exactly 0.35, 0.4,
// 0.45, 0.5, 0.55.
func floatRange(from, to, step float64) ([]any, error) {
	if !(step > 0) || !(to >= from) || math.IsInf(to-from, 0) {
		return nil, fmt.Errorf("range from %g to %g step %g: step must be > 0 and to ≥ from", from, to, step)
	}
	nf := math.Floor((to-from)/step+1e-9) + 1
	if nf > maxAxisValues {
		return nil, fmt.Errorf("range gives %.0f values: at most %d", nf, maxAxisValues)
	}
	n := int(nf)
	out := make([]any, n)
	for i := range n {
		x := from + float64(i)*step
		x, _ = strconv.ParseFloat(strconv.FormatFloat(x, 'g', 12, 64), 64)
		out[i] = x
	}
	return out, nil
}

func number(v any) (float64, bool) {
	switch v := v.(type) {
	case int64:
		return float64(v), true
	case float64:
		return v, !math.IsNaN(v) && !math.IsInf(v, 0)
	}
	return 0, false
}

func valueNum(v any) float64 {
	if f, ok := number(v); ok {
		return f
	}
	return math.NaN()
}

// valueText formats a TOML value as inline TOML (strings unquoted at the
// top level): 0.45, sealed, [1, 2], { n = 1.1, x_um = 10 }.
func valueText(v any) string {
	if s, ok := v.(string); ok {
		return s
	}
	return inlineTOML(v)
}

func inlineTOML(v any) string {
	switch v := v.(type) {
	case string:
		return strconv.Quote(v)
	case int64:
		return strconv.FormatInt(v, 10)
	case float64:
		s := strconv.FormatFloat(v, 'g', -1, 64)
		if !strings.ContainsAny(s, ".eEn") {
			s += ".0"
		}
		return s
	case bool:
		return strconv.FormatBool(v)
	case []any:
		parts := make([]string, len(v))
		for i, x := range v {
			parts[i] = inlineTOML(x)
		}
		return "[" + strings.Join(parts, ", ") + "]"
	case map[string]any:
		keys := make([]string, 0, len(v))
		for k := range v {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		parts := make([]string, len(keys))
		for i, k := range keys {
			parts[i] = k + " = " + inlineTOML(v[k])
		}
		return "{ " + strings.Join(parts, ", ") + " }"
	}
	return fmt.Sprint(v)
}

// setValue puts v at dotted key in r's tree, as --set does, and records it
// so that messages about the key point at the sweep (see pointError).
func setValue(r *configs.Raw, key string, v any) error {
	return r.Put(key, configs.DeepCopy(v), key+"="+inlineTOML(v), r.Name)
}

// Points resolves every point of the sweep against the base config (with
// the command line's overrides sets applied first) and checks each one as
// gelspace run would. Relative file paths of the base (psd.table,
// curing.schedule) become absolute so each point's config.toml runs from
// its own folder.
func (s *Spec) Points(sets []string) ([]Point, error) {
	var baseData []byte
	baseName, baseDir := configs.DefaultName, "."
	if s.Base == "" {
		r, err := configs.LoadRaw("")
		if err != nil {
			return nil, err
		}
		if baseData, err = toml.Marshal(r.Tree); err != nil {
			return nil, err
		}
	} else {
		data, err := configs.ReadInput(s.Base, "base config")
		if err != nil {
			return nil, &configs.InputError{File: s.File, Key: "base", Msg: err.Error()}
		}
		baseData, baseName, baseDir = data, s.Base, filepath.Dir(s.Base)
	}
	base, err := configs.ParseRaw(baseName, baseDir, baseData)
	if err != nil {
		return nil, err
	}
	for _, f := range s.Fixed {
		if err := setValue(base, f.Key, f.Value); err != nil {
			return nil, s.pointError(err, -1, nil)
		}
	}
	for _, kv := range sets {
		if err := base.Set(kv); err != nil {
			return nil, err
		}
	}
	if _, err := base.Decode(); err != nil {
		return nil, s.pointError(err, -1, nil)
	}
	np := s.NumPoints()
	width := max(4, len(strconv.Itoa(np-1)))
	var out []Point
	for p := range np {
		idx := s.valueIndices(p)
		for rep := range s.Replicates {
			r := base.Clone()
			for ai, a := range s.Axes {
				if err := setValue(r, a.Key, a.Values[idx[ai]]); err != nil {
					return nil, s.pointError(err, p, idx)
				}
			}
			cfg, err := r.Decode()
			if err != nil {
				return nil, s.pointError(err, p, idx)
			}
			seed := cfg.Seed + int64(rep)
			r.Tree["seed"] = seed
			absPath := func(key, val string) {
				if val != "" && !filepath.IsAbs(val) {
					abs, err := filepath.Abs(filepath.Join(r.Dir, val))
					if err == nil {
						table, leaf, _ := strings.Cut(key, ".")
						r.Tree[table].(map[string]any)[leaf] = abs
					}
				}
			}
			absPath("psd.table", cfg.PSD.Table)
			absPath("curing.schedule", cfg.Curing.Schedule)
			if cfg, err = r.Decode(); err != nil {
				return nil, s.pointError(err, p, idx)
			}
			if err := cfg.Validate(); err != nil {
				return nil, s.pointError(err, p, idx)
			}
			name := fmt.Sprintf("p%0*d_r%d", width, p, rep)
			text, err := toml.Marshal(r.Tree)
			if err != nil {
				return nil, err
			}
			var b bytes.Buffer
			fmt.Fprintf(&b, "# gelspace sweep %s, point %s (seed %d)", filepath.Base(s.File), name, seed)
			for ai, a := range s.Axes {
				fmt.Fprintf(&b, "; %s = %s", a.Key, inlineTOML(a.Values[idx[ai]]))
			}
			b.WriteString("\n# Written by gelspace sweep; edits make the point run again.\n")
			b.Write(text)
			out = append(out, Point{Name: name, Point: p, Replicate: rep, Seed: seed, Values: idx, Config: b.Bytes()})
		}
	}
	return out, nil
}

// pointError places a config error that a swept value caused at the
// axis's line in the sweep file, naming the point's values.
func (s *Spec) pointError(err error, p int, idx []int) error {
	var ie *configs.InputError
	if !errors.As(err, &ie) {
		return err
	}
	var vals []string
	for ai, a := range s.Axes {
		if idx != nil {
			vals = append(vals, a.Key+" = "+inlineTOML(a.Values[idx[ai]]))
		}
	}
	where := ""
	if idx != nil {
		where = fmt.Sprintf(" (point %d: %s)", p, strings.Join(vals, ", "))
	}
	if strings.HasPrefix(ie.File, "--set ") {
		kv := strings.TrimPrefix(ie.File, "--set ")
		key, _, _ := strings.Cut(kv, "=")
		for _, a := range s.Axes {
			if a.Key == key {
				return &configs.InputError{File: s.File, Line: a.Line, Key: ie.Key, Msg: ie.Msg + where}
			}
		}
		for _, f := range s.Fixed {
			if f.Key == key {
				return &configs.InputError{File: s.File, Line: f.Line, Key: ie.Key, Msg: ie.Msg + " (from [set])"}
			}
		}
		return ie
	}
	return &configs.InputError{File: ie.File, Line: ie.Line, Key: ie.Key, Msg: ie.Msg + where}
}
