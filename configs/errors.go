package configs

import (
	"fmt"
	"strings"
)

// InputError is bad input: a config, a table, a sweep file or folder, or
// a flag. Its text is one line naming the file (or the flag), the line,
// the key and the allowed range; gelspace ends with exit status 2 on it.
// Callers recognise it with errors.As.
type InputError struct {
	File string // config file, table file or "--set"; "" when Msg says it all
	Line int    // 0 when not known
	Key  string // dotted config key, or ""
	Msg  string
}

// Error is the one-line message: FILE:LINE: KEY: MSG, leaving out what
// is not known.
func (e *InputError) Error() string {
	if e.File == "" && e.Line == 0 && e.Key == "" {
		return e.Msg
	}
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	if e.Key != "" {
		fmt.Fprintf(&b, ": %s", e.Key)
	}
	b.WriteString(": ")
	b.WriteString(e.Msg)
	return b.String()
}
