package dataset

import (
	"image"
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

// TestPairInputs: two files make a pair, a folder its pairs; each error
// names the file or folder at fault.
func TestPairInputs(t *testing.T) {
	dir := t.TempDir()
	writePNG := func(path string, w, h int) string {
		t.Helper()
		if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
			t.Fatal(err)
		}
		if err := savePNG(path, image.NewGray(image.Rect(0, 0, w, h))); err != nil {
			t.Fatal(err)
		}
		return path
	}
	l := writePNG(filepath.Join(dir, "files", "l.png"), 8, 4)
	r := writePNG(filepath.Join(dir, "files", "r.png"), 8, 4)
	wide := writePNG(filepath.Join(dir, "files", "wide.png"), 9, 4)
	pairs := filepath.Join(dir, "pairs")
	writePNG(filepath.Join(pairs, "left", "a.png"), 8, 4)
	writePNG(filepath.Join(pairs, "right", "a.png"), 8, 4)
	writePNG(filepath.Join(pairs, "left", "b.png"), 8, 4)
	writePNG(filepath.Join(pairs, "right", "b.png"), 8, 4)
	unpaired := filepath.Join(dir, "unpaired")
	writePNG(filepath.Join(unpaired, "left", "a.png"), 8, 4)
	writePNG(filepath.Join(unpaired, "left", "c.png"), 8, 4)
	writePNG(filepath.Join(unpaired, "right", "a.png"), 8, 4)
	got, err := PairInputs([]string{l, r, pairs})
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, p := range got {
		names = append(names, p.Name+":"+filepath.Base(p.Left)+"+"+filepath.Base(p.Right))
	}
	if strings.Join(names, ",") != "l:l.png+r.png,a:a.png+a.png,b:b.png+b.png" {
		t.Errorf("pairs %v", names)
	}
	for _, c := range []struct {
		name  string
		paths []string
		want  []string
	}{
		{"one view", []string{l}, []string{l, "no right view"}},
		{"view then folder", []string{l, pairs}, []string{l, "no right view"}},
		{"missing right", []string{l, filepath.Join(dir, "files", "missing.png")}, []string{"missing.png"}},
		{"missing path", []string{filepath.Join(dir, "nothing")}, []string{"nothing"}},
		{"sizes", []string{l, wide}, []string{l, "8×4", wide, "9×4"}},
		{"not a pair folder", []string{filepath.Join(dir, "files")}, []string{filepath.Join(dir, "files"), "no left/"}},
		{"name only in left/", []string{unpaired}, []string{filepath.Join("left", "c.png"), "no partner in right/"}},
		{"same name", []string{pairs, filepath.Join(pairs, "left", "a.png"), r}, []string{"same output files (a.*)"}},
	} {
		_, err := PairInputs(c.paths)
		if err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
			t.Errorf("%s: %v, want an error", c.name, err)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: %v, want it to name %q", c.name, err, w)
			}
		}
	}
}
