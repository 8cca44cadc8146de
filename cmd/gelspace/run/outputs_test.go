package run

import (
	"io"
	"os"
	"path/filepath"
	"testing"

	"gelspace/render"
)

func TestAtomicWrite(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "x.txt")
	if err := render.WriteFileAtomic(p, func(w io.Writer) error { _, err := w.Write([]byte("hello")); return err }); err != nil {
		t.Fatal(err)
	}
	if err := render.WriteFileAtomic(p, func(w io.Writer) error { w.Write([]byte("partial")); return os.ErrInvalid }); err == nil {
		t.Fatal("failed write reported success")
	}
	b, _ := os.ReadFile(p)
	entries, _ := os.ReadDir(dir)
	if string(b) != "hello" || len(entries) != 1 {
		t.Fatalf("after a failed write: %q, %d files", b, len(entries))
	}
}
