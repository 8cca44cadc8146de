package main

import (
	"fmt"
	"os"
	"runtime/debug"
	"strings"
	"unicode"
	"unicode/utf8"

	"gelspace/cmd/gelspace/run"
	"gelspace/configs"
)

// Limits of the box edge given by --size (box.voxels has the same).
const minSize, maxSize = 10, 1000

// checkSize refuses a --size outside the allowed range, naming the flag
// (gelspace run then checks its memory estimate, see runMemory).
func checkSize(cmd string, n int) error {
	if n < minSize || n > maxSize {
		return &usageError{fmt.Sprintf("%s: --size %d: must be between %d and %d voxels per edge", cmd, n, minSize, maxSize)}
	}
	return nil
}

// maxMessage bounds the error line printed.
const maxMessage = 400

// oneLine makes an error message one printable line: newlines become
// spaces, other control and invalid bytes are escaped, and a message
// longer than maxMessage is cut.
func oneLine(msg string) string {
	var b strings.Builder
	for i, r := range msg {
		if b.Len() >= maxMessage {
			b.WriteString("…")
			break
		}
		switch {
		case r == '\n' || r == '\r' || r == '\t':
			b.WriteByte(' ')
		case r == utf8.RuneError && len(msg[i:]) > 0:
			fmt.Fprintf(&b, "\\x%02x", msg[i])
		case !unicode.IsPrint(r):
			fmt.Fprintf(&b, "\\u%04x", r)
		default:
			b.WriteRune(r)
		}
	}
	return b.String()
}

// runMemory is run.CheckMemory, with the message naming --size when the
// box edge came from it.
func runMemory(cfg *configs.Config, fromSize bool) error {
	if !fromSize {
		return run.CheckMemory(cfg)
	}
	if msg := run.MemoryShortfall(cfg.Box.Voxels, cfg.Output.Diffusivity); msg != "" {
		return &usageError{"run: --size " + msg}
	}
	return nil
}

// limitMemory sets the garbage collector's soft memory limit to need
// bytes (the run's heap limit, run.HeapLimit), unless GOMEMLIMIT is set:
// the heap then grows past its live size only up to what the run was
// expected to take, instead of to twice its live size. A live heap above the limit only makes
// the collector work harder; the run does not fail for it.
func limitMemory(need float64) {
	if os.Getenv("GOMEMLIMIT") != "" {
		return
	}
	debug.SetMemoryLimit(int64(need))
}
