package voxel

import (
	"fmt"
	"strconv"
	"unicode/utf8"
)

// excerpt is untrusted text from a file (a header, a field) quoted in an
// error message: at most its first 40 bytes, escaped to ASCII, with "…"
// when cut, so that a binary or runaway file cannot flood the terminal
// with control bytes or a megabyte of header.
type excerpt string

// Format writes the quoted excerpt for every verb.
func (e excerpt) Format(f fmt.State, _ rune) {
	const max = 40
	s, cut := string(e), false
	if len(s) > max {
		s, cut = s[:max], true
		for len(s) > 0 && !utf8.ValidString(s) {
			s = s[:len(s)-1]
		}
	}
	f.Write([]byte(strconv.QuoteToASCII(s)))
	if cut {
		f.Write([]byte("…"))
	}
}
