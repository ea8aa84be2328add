package dataset

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestImageInputs: files as given, folders in name order with their
// non-images skipped, and the errors for a same-named pair, an empty folder
// and a missing path.
func TestImageInputs(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"b.png", "a.jpg", "notes.txt"} {
		if err := os.WriteFile(filepath.Join(dir, n), nil, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	other := filepath.Join(t.TempDir(), "c.png")
	os.WriteFile(other, nil, 0o644)
	got, err := ImageInputs([]string{other, dir})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, in := range got {
		names = append(names, in.Name)
	}
	if strings.Join(names, ",") != "c,a,b" || got[1].Path != filepath.Join(dir, "a.jpg") {
		t.Fatalf("inputs %+v", got)
	}
	if _, err := ImageInputs([]string{dir, filepath.Join(dir, "a.jpg")}); err == nil || !strings.Contains(err.Error(), "same output files") {
		t.Errorf("same names: %v", err)
	}
	if _, err := ImageInputs([]string{t.TempDir()}); err == nil || !strings.Contains(err.Error(), "holds no PNG or JPEG") {
		t.Errorf("empty folder: %v", err)
	}
	if _, err := ImageInputs([]string{filepath.Join(dir, "missing.png")}); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
		t.Errorf("missing file: %v", err)
	}
}
