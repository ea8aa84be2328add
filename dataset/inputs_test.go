package dataset

import (
	"image"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
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
		testutil.WantError(t, c.name, err, "dataset: ", c.want...)
	}
}

// TestSharedRig: the rig of every pair when all have an equal one (a
// copy), nil when one lacks it, they differ, or there are no pairs.
func TestSharedRig(t *testing.T) {
	a := &depth.Rig{Width: 8, Height: 4, Fx: 5, Fy: 5, Cx: 3.5, Cy: 1.5, Baseline: 0.1, MinDepth: 0.2, MaxDepth: 9}
	same, other := *a, *a
	other.Baseline = 0.2
	for _, c := range []struct {
		name string
		rigs []*depth.Rig
		want bool
	}{
		{"none", nil, false},
		{"one", []*depth.Rig{a}, true},
		{"equal values", []*depth.Rig{a, &same}, true},
		{"one lacks it", []*depth.Rig{a, nil}, false},
		{"first lacks it", []*depth.Rig{nil, a}, false},
		{"different", []*depth.Rig{a, &other}, false},
	} {
		var pairs []PairFiles
		for _, r := range c.rigs {
			pairs = append(pairs, PairFiles{Rig: r})
		}
		got := SharedRig(pairs)
		if (got != nil) != c.want || got != nil && (*got != *a || got == a) {
			t.Errorf("%s: %+v, want a copy of the rig: %v", c.name, got, c.want)
		}
	}
}
