// Package fuzzmut drives gelspace's fuzz targets for a fixed number of
// executions without the Go fuzzing engine, so that CI can run every
// parser's target a million times in a bounded, reproducible time
// (GELSPACE_LONG=1). The inputs are mutations of the targets' seed
// corpora by a deterministic random generator: bit flips, interesting
// bytes, dictionary tokens (nan, inf, 1e300, brackets, quotes, a BOM),
// deleted and duplicated ranges, splices of two inputs and replaced
// numbers. It is used by tests only.
package fuzzmut

import (
	"fmt"
	"math/rand/v2"
	"os"
	"strconv"
	"testing"
	"time"
)

// MaxInput bounds the length of a mutated input.
const MaxInput = 64 << 10

// Execs returns the number of executions a long fuzz run makes per
// target: GELSPACE_FUZZ_N when set, else def.
func Execs(def int) int {
	if v, err := strconv.Atoi(os.Getenv("GELSPACE_FUZZ_N")); err == nil && v > 0 {
		return v
	}
	return def
}

// tokens are inserted or put in place of numbers: the values and
// delimiters that parsers of TOML, CSV, XML and NumPy headers trip on.
var tokens = []string{
	"nan", "NaN", "inf", "-inf", "+Inf", "1e300", "-1e300", "1e-300", "-1", "0", "-0", "0.0",
	"9223372036854775807", "18446744073709551616", "4294967296", "65536", "1e9", "256", "300",
	"\"", "'", ",", "=", "[", "]", "{", "}", "(", ")", "<", ">", "/>", "_", ".", "..", "#",
	"\n", "\r\n", "\t", " ", "\x00", "\ufeff", "\xff\xfe", "\u202e", "True", "False", "true", "false",
	"[[", "]]", "= [", "= {", "{ from = 0, to = 1e9, step = 1e-9 }", "'shape': (", "), }",
	"&amp;", "&#0;", "<![CDATA[", "<!--", "format=\"ascii\"", "format=\"binary\"", "format=\"appended\"",
	"type=\"Int64\"", "type=\"UInt8\"", "WholeExtent=\"0 1000000 0 1000000 0 1000000\"",
}

var interesting = []byte{0, 0x7f, 0x80, 0xff, '\n', '\r', ',', '"', '\'', '=', '[', ']', '{', '}', '.', '-', '+', 'e', '<', '>', '#', ' '}

// Mutator makes inputs from seeds, deterministically from its seed.
type Mutator struct {
	r     *rand.Rand
	seeds [][]byte
	last  []byte
}

// New returns a mutator over seeds.
func New(seed uint64, seeds [][]byte) *Mutator {
	if len(seeds) == 0 {
		seeds = [][]byte{nil}
	}
	return &Mutator{r: rand.New(rand.NewPCG(seed, 0x9e3779b97f4a7c15)), seeds: seeds}
}

// Next returns the next input: a seed or the previous input, mutated one
// to four times.
func (m *Mutator) Next() []byte {
	var b []byte
	if m.last != nil && m.r.IntN(3) == 0 {
		b = append([]byte(nil), m.last...)
	} else {
		b = append([]byte(nil), m.seeds[m.r.IntN(len(m.seeds))]...)
	}
	for k := 1 + m.r.IntN(4); k > 0; k-- {
		b = m.mutate(b)
	}
	if len(b) > MaxInput {
		b = b[:MaxInput]
	}
	m.last = b
	return b
}

func (m *Mutator) mutate(b []byte) []byte {
	r := m.r
	pos := func() int { return r.IntN(len(b) + 1) }
	switch r.IntN(8) {
	case 0: // flip a bit
		if len(b) > 0 {
			b[r.IntN(len(b))] ^= 1 << r.IntN(8)
		}
	case 1: // an interesting byte
		if len(b) > 0 {
			b[r.IntN(len(b))] = interesting[r.IntN(len(interesting))]
		}
	case 2, 3: // insert a token
		p, tok := pos(), tokens[r.IntN(len(tokens))]
		b = append(b[:p], append([]byte(tok), b[p:]...)...)
	case 4: // delete a range
		if len(b) > 0 {
			p := r.IntN(len(b))
			n := 1 + r.IntN(min(len(b)-p, 64))
			b = append(b[:p], b[p+n:]...)
		}
	case 5: // duplicate a range
		if len(b) > 0 {
			p := r.IntN(len(b))
			n := 1 + r.IntN(min(len(b)-p, 256))
			q := pos()
			chunk := append([]byte(nil), b[p:p+n]...)
			b = append(b[:q], append(chunk, b[q:]...)...)
		}
	case 6: // splice with another seed
		o := m.seeds[r.IntN(len(m.seeds))]
		p, q := pos(), r.IntN(len(o)+1)
		b = append(b[:p:p], o[q:]...)
	case 7: // replace a number with a token
		for tries := 0; tries < 8 && len(b) > 0; tries++ {
			p := r.IntN(len(b))
			if b[p] < '0' || b[p] > '9' {
				continue
			}
			e := p
			for e < len(b) && (b[e] >= '0' && b[e] <= '9' || b[e] == '.' || b[e] == 'e' || b[e] == '-') {
				e++
			}
			tok := tokens[r.IntN(20)]
			b = append(b[:p], append([]byte(tok), b[e:]...)...)
			break
		}
	}
	return b
}

// Run executes body on n inputs made by New(seed, seeds) and reports, on a
// panic, the iteration and the input that caused it. It logs the
// executions and their rate.
func Run(t testing.TB, seed uint64, seeds [][]byte, n int, body func(data []byte)) {
	t.Helper()
	m := New(seed, seeds)
	start := time.Now()
	for i := 0; i < n; i++ {
		in := m.Next()
		func() {
			defer func() {
				if p := recover(); p != nil {
					t.Fatalf("iteration %d: panic %v on input %s", i, p, quote(in))
				}
			}()
			body(in)
		}()
		if t.Failed() {
			t.Fatalf("iteration %d failed on input %s", i, quote(in))
		}
	}
	el := time.Since(start)
	t.Logf("%d executions in %.1f s (%.0f per second)", n, el.Seconds(), float64(n)/el.Seconds())
}

func quote(b []byte) string {
	if len(b) > 2000 {
		return fmt.Sprintf("%q… (%d bytes)", b[:2000], len(b))
	}
	return fmt.Sprintf("%q", b)
}
