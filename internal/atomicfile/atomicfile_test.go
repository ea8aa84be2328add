package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestWrite(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.bin")
	if err := os.WriteFile(path, []byte("old"), 0o600); err != nil {
		t.Fatal(err)
	}
	// A failing writer leaves the old file and no temporary behind, and its
	// error comes back unchanged.
	boom := errors.New("pkg: boom")
	err := Write(path, "pkg", func(w io.Writer) error {
		io.WriteString(w, "partial")
		return boom
	})
	if err != boom {
		t.Fatalf("error %v, want boom unchanged", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "old" {
		t.Errorf("file now holds %q, want the old content", b)
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("%d entries in the directory, want 1", len(entries))
	}
	if err := WriteBytes(path, "pkg", []byte("new")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "new" {
		t.Errorf("file holds %q, want new", b)
	}
	st, err := os.Stat(path)
	if err != nil {
		t.Fatal(err)
	}
	if st.Mode().Perm() != 0o644 {
		t.Errorf("mode %v, want 0644", st.Mode().Perm())
	}
	if entries, _ := os.ReadDir(dir); len(entries) != 1 {
		t.Errorf("%d entries in the directory after a good write, want 1", len(entries))
	}
	// More than the 64 KiB buffer, to cover the flushes inside write.
	big := make([]byte, 200_000)
	for i := range big {
		big[i] = byte(i * 7)
	}
	if err := WriteBytes(path, "pkg", big); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != string(big) {
		t.Errorf("large file read back with %d bytes, want %d equal bytes", len(b), len(big))
	}
	missing := filepath.Join(dir, "missing", "x")
	err = Write(missing, "pkg", func(io.Writer) error { return nil })
	if err == nil || !strings.HasPrefix(err.Error(), "pkg: writing "+missing+": ") || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("missing directory: %v", err)
	}
}

func TestWriteRelative(t *testing.T) {
	dir := t.TempDir()
	t.Chdir(dir)
	if err := WriteBytes("rel.txt", "pkg", []byte("x")); err != nil {
		t.Fatal(err)
	}
	if b, err := os.ReadFile(filepath.Join(dir, "rel.txt")); err != nil || string(b) != "x" {
		t.Errorf("relative path: %q %v", b, err)
	}
}
