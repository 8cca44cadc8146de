package configs

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strconv"
	"unicode/utf8"
)

// MaxInputBytes is the largest text input gelspace reads: configs, PSD
// tables, temperature schedules, sweep files and measured curves. Real
// ones are a few kB; the cap keeps /dev/zero or a mistaken binary from
// filling memory.
const MaxInputBytes = 8 << 20

// ReadLimited reads a text input of at most limit bytes. It refuses, as an
// InputError that says what the file was for ("config", "PSD table"),
// a missing file, anything that is not a regular file (a folder, a
// device, a pipe), a file larger than limit, before reading it, and one
// that is not UTF-8 text. A leading UTF-8 byte-order mark is dropped.
func ReadLimited(path, what string, limit int64) ([]byte, error) {
	refuse := func(msg string) error {
		return &InputError{File: path, Msg: "cannot read " + what + ": " + msg}
	}
	f, err := os.Open(path)
	if err != nil {
		if errors.Is(err, fs.ErrNotExist) {
			return nil, refuse("no such file")
		}
		if errors.Is(err, fs.ErrPermission) {
			return nil, refuse("permission denied")
		}
		return nil, refuse(err.Error())
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, refuse(err.Error())
	}
	if !st.Mode().IsRegular() {
		kind := "not a regular file"
		if st.IsDir() {
			kind = "a folder, not a file"
		}
		return nil, refuse(kind)
	}
	if st.Size() > limit {
		return nil, refuse(fmt.Sprintf("%d bytes: larger than the %d allowed", st.Size(), limit))
	}
	data, err := io.ReadAll(io.LimitReader(f, limit+1))
	if err != nil {
		return nil, refuse(err.Error())
	}
	if int64(len(data)) > limit {
		return nil, refuse(fmt.Sprintf("grew beyond the %d bytes allowed while read", limit))
	}
	data = bytes.TrimPrefix(data, []byte("\ufeff"))
	if i := binaryAt(data); i >= 0 {
		return nil, refuse(fmt.Sprintf("not a text file (byte %d is binary): give a UTF-8 text file", i))
	}
	return data, nil
}

// binaryAt returns the offset of the first byte that no text input holds
// (NUL, another control character than tab, CR, LF and form feed, or
// invalid UTF-8), or -1.
func binaryAt(data []byte) int {
	for i := 0; i < len(data); {
		c := data[i]
		if c < utf8.RuneSelf {
			if c < 0x20 && c != '\t' && c != '\n' && c != '\r' && c != '\f' || c == 0x7f {
				return i
			}
			i++
			continue
		}
		r, n := utf8.DecodeRune(data[i:])
		if r == utf8.RuneError && n <= 1 {
			return i
		}
		i += n
	}
	return -1
}

// Snippet quotes at most the first 40 characters of untrusted text for a
// message, escaped (no control or binary bytes reach the terminal), with
// "…" when cut.
func Snippet(s string) string {
	const max = 40
	cut := false
	if len(s) > max {
		s, cut = s[:max], true
		for len(s) > 0 && !utf8.ValidString(s) {
			s = s[:len(s)-1]
		}
	}
	q := strconv.QuoteToASCII(s)
	if cut {
		q += "…"
	}
	return q
}
