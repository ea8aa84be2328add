package atomicfile

import (
	"errors"
	"io"
	"os"
	"path/filepath"
	"slices"
	"testing"
)

// TestStale: the temporary file that Write creates for a path matches, so
// does a leftover with other digits; files of other names, of other
// outputs, with letters after the digits, or folders do not.
func TestStale(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "w.safetensors")
	// The name Write really uses, seen from inside its callback; the file
	// is made again afterwards, as a kill before the rename leaves it.
	var made string
	Write(path, "test", func(io.Writer) error {
		ents, _ := os.ReadDir(dir)
		for _, e := range ents {
			made = filepath.Join(dir, e.Name())
		}
		return errors.New("test: stop")
	})
	if made == "" {
		t.Fatal("no temporary file seen")
	}
	if err := os.WriteFile(made, []byte("partial"), 0o600); err != nil {
		t.Fatal(err)
	}
	keep := []string{"w.safetensors", ".w.safetensors.tmpabc", ".w.safetensors.tmp", ".x.safetensors.tmp123", "w.safetensors.tmp123", ".w.safetensors.tmp12.bak"}
	for _, n := range keep {
		os.WriteFile(filepath.Join(dir, n), nil, 0o644)
	}
	os.WriteFile(filepath.Join(dir, ".w.safetensors.tmp987"), nil, 0o644)
	os.Mkdir(filepath.Join(dir, ".w.safetensors.tmp555"), 0o755)
	got, err := Stale(path)
	if err != nil {
		t.Fatal(err)
	}
	want := []string{made, filepath.Join(dir, ".w.safetensors.tmp987")}
	slices.Sort(got)
	slices.Sort(want)
	if !slices.Equal(got, want) {
		t.Errorf("Stale = %v, want %v", got, want)
	}
}
