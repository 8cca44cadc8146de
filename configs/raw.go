package configs

import (
	"bytes"
	"errors"
	"fmt"
	"regexp"
	"sort"
	"strings"

	"github.com/BurntSushi/toml"
)

// Raw is a config as a tree of TOML values (tables are map[string]any),
// before it is checked against the Config schema, with the line of every
// key in its source. Sweeps build on it: parse a base file once, Set the
// axis keys of each point, then Decode.
type Raw struct {
	Name string         // file name for messages
	Dir  string         // folder that relative paths in the config are read from
	Tree map[string]any // the values
	// lines maps a dotted key to its line in the source file; keys that
	// came from Set map to 0.
	lines map[string]int
	// sets records the KEY=VALUE text of each Set, by key.
	sets map[string]string
}

// ParseRaw parses TOML text. A syntax error comes back as an InputError
// with the line.
func ParseRaw(name, dir string, data []byte) (*Raw, error) {
	tree := map[string]any{}
	if _, err := toml.NewDecoder(bytes.NewReader(data)).Decode(&tree); err != nil {
		var pe toml.ParseError
		if errors.As(err, &pe) {
			return nil, &InputError{File: name, Line: pe.Position.Line, Msg: "malformed TOML: " + pe.Message}
		}
		return nil, &InputError{File: name, Msg: "malformed TOML: " + err.Error()}
	}
	return &Raw{Name: name, Dir: dir, Tree: tree, lines: KeyLines(data), sets: map[string]string{}}, nil
}

// Set applies one KEY=VALUE override: KEY is dotted ("mix.w_c",
// "cement.phases.c3s"), VALUE is a TOML value (0.4, "sealed", [1, 2],
// { x_um = 10, n = 1 }); a VALUE that is not valid TOML is taken as a
// string. Intermediate tables are created; a value that is not a table
// cannot take a sub-key.
func (r *Raw) Set(kv string) error {
	k, v, ok := strings.Cut(kv, "=")
	k = strings.TrimSpace(k)
	if !ok || k == "" {
		return &InputError{File: "--set", Key: kv, Msg: "must be KEY=VALUE with a dotted KEY (mix.w_c=0.4)"}
	}
	path := strings.Split(k, ".")
	for _, p := range path {
		if p == "" {
			return &InputError{File: "--set", Key: k, Msg: "empty part in the dotted key"}
		}
	}
	var val any
	tmp := map[string]any{}
	if _, err := toml.Decode("v = "+strings.TrimSpace(v), &tmp); err == nil {
		val = tmp["v"]
	} else {
		val = strings.TrimSpace(v)
	}
	return r.Put(k, val, kv, "--set")
}

// Put stores val at the dotted key, creating intermediate tables, and
// records kv as the override's text, so that messages about the key name
// the override rather than a line of the file; file names the source of
// the override in errors (sweeps pass the sweep file).
func (r *Raw) Put(key string, val any, kv, file string) error {
	path := strings.Split(key, ".")
	m := r.Tree
	for i := 0; i < len(path)-1; i++ {
		p := path[i]
		next, exists := m[p]
		// An array of tables ([[scm]]) is reached by index: scm.0.kind.
		if idx, isIndex := arrayIndex(path[i+1]); isIndex && i+1 < len(path)-1 {
			arr, err := tableArray(next, exists)
			if err != nil || idx > len(arr) {
				what := fmt.Sprintf("%s is not an array of tables", strings.Join(path[:i+1], "."))
				if err == nil {
					what = fmt.Sprintf("%s has %d entries: index %d must be at most %d (the next one adds an entry)", strings.Join(path[:i+1], "."), len(arr), idx, len(arr))
				}
				return &InputError{File: file, Key: key, Msg: what}
			}
			if idx == len(arr) {
				arr = append(arr, map[string]any{})
			}
			m[p] = arr
			m = arr[idx]
			i++
			continue
		}
		if !exists {
			nm := map[string]any{}
			m[p] = nm
			m = nm
			continue
		}
		nm, isMap := next.(map[string]any)
		if !isMap {
			return &InputError{File: file, Key: key, Msg: fmt.Sprintf("%s is a value, not a table", strings.Join(path[:i+1], "."))}
		}
		m = nm
	}
	m[path[len(path)-1]] = val
	r.sets[key] = kv
	return nil
}

// arrayIndex reports whether a key part is an array index (0, 1, …; at
// most 99).
func arrayIndex(p string) (int, bool) {
	if len(p) == 0 || len(p) > 2 {
		return 0, false
	}
	n := 0
	for _, c := range p {
		if c < '0' || c > '9' {
			return 0, false
		}
		n = 10*n + int(c-'0')
	}
	return n, true
}

// tableArray returns the tables of an array of tables, a new empty one
// when absent.
func tableArray(v any, exists bool) ([]map[string]any, error) {
	if !exists {
		return nil, nil
	}
	switch a := v.(type) {
	case []map[string]any:
		return a, nil
	case []any:
		out := make([]map[string]any, len(a))
		for i, x := range a {
			t, ok := x.(map[string]any)
			if !ok {
				return nil, fmt.Errorf("not a table")
			}
			out[i] = t
		}
		return out, nil
	}
	return nil, fmt.Errorf("not an array of tables")
}

// Clone returns a copy of r whose tree and overrides can change without
// touching r's.
func (r *Raw) Clone() *Raw {
	c := &Raw{Name: r.Name, Dir: r.Dir, Tree: DeepCopy(r.Tree).(map[string]any), lines: r.lines, sets: make(map[string]string, len(r.sets))}
	for k, v := range r.sets {
		c.sets[k] = v
	}
	return c
}

// DeepCopy copies a TOML value (tables, arrays, arrays of tables) so that
// edits of the copy do not reach the original.
func DeepCopy(v any) any {
	switch v := v.(type) {
	case map[string]any:
		m := make(map[string]any, len(v))
		for k, x := range v {
			m[k] = DeepCopy(x)
		}
		return m
	case []any:
		s := make([]any, len(v))
		for i, x := range v {
			s[i] = DeepCopy(x)
		}
		return s
	case []map[string]any:
		s := make([]map[string]any, len(v))
		for i, x := range v {
			s[i] = DeepCopy(x).(map[string]any)
		}
		return s
	}
	return v
}

// Line returns the source line of a dotted key, or of its nearest parent,
// or 0.
func (r *Raw) Line(key string) int {
	for k := key; k != ""; {
		if _, fromSet := r.sets[k]; fromSet {
			return 0
		}
		if l, ok := r.lines[k]; ok {
			return l
		}
		i := strings.LastIndexByte(k, '.')
		if i < 0 {
			break
		}
		k = k[:i]
	}
	return 0
}

// errAt returns an InputError for key, located in the file or in --set.
func (r *Raw) errAt(key, format string, args ...any) *InputError {
	msg := fmt.Sprintf(format, args...)
	for k := key; k != ""; {
		if kv, ok := r.sets[k]; ok {
			return &InputError{File: "--set " + kv, Key: key, Msg: msg}
		}
		i := strings.LastIndexByte(k, '.')
		if i < 0 {
			break
		}
		k = k[:i]
	}
	// A key below the one named (kinetics.phase.xyz.velocity_um_per_h
	// when the message is about kinetics.phase.xyz) set by --set, and not
	// in the file, is blamed on that --set.
	if r.Line(key) == 0 {
		var below []string
		for k := range r.sets {
			if strings.HasPrefix(k, key+".") {
				below = append(below, k)
			}
		}
		if len(below) > 0 {
			sort.Strings(below)
			return &InputError{File: "--set " + r.sets[below[0]], Key: key, Msg: msg}
		}
	}
	return &InputError{File: r.Name, Line: r.Line(key), Key: key, Msg: msg}
}

var lastKeyRE = regexp.MustCompile(`last key "([^"]*)"\): (.*)$`)

// Decode checks the tree against the Config schema (unknown keys and
// wrong types are errors with their line) and returns the config with
// defaults for absent keys. It does not check ranges: see Config.Validate.
func (r *Raw) Decode() (*Config, error) {
	var buf bytes.Buffer
	if err := toml.NewEncoder(&buf).Encode(r.Tree); err != nil {
		return nil, &InputError{File: r.Name, Msg: "cannot re-encode config: " + err.Error()}
	}
	cfg := Defaults()
	md, err := toml.NewDecoder(&buf).Decode(cfg)
	if err != nil {
		if m := lastKeyRE.FindStringSubmatch(err.Error()); m != nil {
			return nil, r.errAt(m[1], "wrong type: %s", m[2])
		}
		return nil, &InputError{File: r.Name, Msg: err.Error()}
	}
	if und := md.Undecoded(); len(und) > 0 {
		keys := make([]string, len(und))
		for i, k := range und {
			keys[i] = k.String()
		}
		sort.Slice(keys, func(i, j int) bool {
			return r.Line(keys[i]) < r.Line(keys[j]) || (r.Line(keys[i]) == r.Line(keys[j]) && keys[i] < keys[j])
		})
		k := keys[0]
		return nil, r.errAt(k, "unknown key (known keys: %s)", strings.Join(knownKeys(k), ", "))
	}
	cfg.Source, cfg.Dir, cfg.raw = r.Name, r.Dir, r
	return cfg, nil
}

// keyLines finds the line of each key of a TOML text: table headers, key =
// value lines and the keys of inline tables on them. It is a locator for
// messages, not a parser: the text has already parsed.
func KeyLines(data []byte) map[string]int {
	lines := map[string]int{}
	table := ""
	arrays := map[string]int{} // entries seen of each array of tables
	for n, line := range strings.Split(string(data), "\n") {
		s := stripComment(line)
		s = strings.TrimSpace(s)
		if s == "" {
			continue
		}
		if strings.HasPrefix(s, "[") {
			name := strings.Trim(s, "[] \t")
			table = cleanKey(name)
			if strings.HasPrefix(s, "[[") { // the k-th entry is table.k
				if _, ok := lines[table]; !ok {
					lines[table] = n + 1
				}
				k := arrays[table]
				arrays[table] = k + 1
				table = fmt.Sprintf("%s.%d", table, k)
			}
			if _, ok := lines[table]; !ok {
				lines[table] = n + 1
			}
			continue
		}
		k, v, ok := strings.Cut(s, "=")
		if !ok {
			continue
		}
		full := joinKey(table, cleanKey(k))
		if _, seen := lines[full]; !seen {
			lines[full] = n + 1
		}
		v = strings.TrimSpace(v)
		if strings.HasPrefix(v, "{") {
			for _, m := range inlineKeyRE.FindAllStringSubmatch(v, -1) {
				lines[joinKey(full, cleanKey(m[1]))] = n + 1
			}
		}
	}
	return lines
}

var inlineKeyRE = regexp.MustCompile(`[{,]\s*([A-Za-z0-9_\-"'.]+)\s*=`)

func stripComment(s string) string {
	inQ := byte(0)
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case inQ != 0 && c == inQ:
			inQ = 0
		case inQ == 0 && (c == '"' || c == '\''):
			inQ = c
		case inQ == 0 && c == '#':
			return s[:i]
		}
	}
	return s
}

func cleanKey(k string) string {
	parts := strings.Split(k, ".")
	for i, p := range parts {
		parts[i] = strings.Trim(strings.TrimSpace(p), `"'`)
	}
	return strings.Join(parts, ".")
}

func joinKey(a, b string) string {
	if a == "" {
		return b
	}
	return a + "." + b
}
