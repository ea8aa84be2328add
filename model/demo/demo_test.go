package demo

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// TestSameAsTestdata checks that the bundled files are the committed
// synthetic pair they claim to be.
func TestSameAsTestdata(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	for _, c := range []struct {
		got  []byte
		path string
	}{{leftPNG, filepath.Join(dir, "left", "000000.png")}, {rigJSON, filepath.Join(dir, "rig.json")}} {
		want, err := os.ReadFile(c.path)
		if err != nil {
			t.Fatal(err)
		}
		if !bytes.Equal(c.got, want) {
			t.Errorf("bundled copy of %s differs", c.path)
		}
	}
	img, err := Left()
	if err != nil {
		t.Fatal(err)
	}
	r, err := Rig()
	if err != nil {
		t.Fatal(err)
	}
	if b := img.Bounds(); b.Dx() != r.Width || b.Dy() != r.Height {
		t.Errorf("image %v, rig %dx%d", b, r.Width, r.Height)
	}
}

func TestFrames(t *testing.T) {
	var names []string
	for f, err := range Frames(filepath.Join("..", "..", "testdata", "synth", "storage", "left")) {
		if err != nil {
			t.Fatal(err)
		}
		if f.Image.Bounds().Dx() != 256 {
			t.Errorf("%s: bounds %v", f.Name, f.Image.Bounds())
		}
		names = append(names, f.Name)
	}
	if len(names) != 3 || names[0] != "000000" || names[2] != "000002" {
		t.Errorf("names %v", names)
	}
	n := 0
	for f, err := range Frames("") {
		if err != nil || f.Name != Name {
			t.Errorf("demo frame %q: %v", f.Name, err)
		}
		n++
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "bad.png"), []byte("not a png"), 0o644)
	for _, d := range []string{dir, filepath.Join(dir, "missing"), t.TempDir()} {
		for _, err := range Frames(d) {
			if err == nil || !strings.HasPrefix(err.Error(), "demo: ") {
				t.Errorf("Frames(%s): %v", d, err)
			}
		}
	}
	if n != 1 {
		t.Errorf("demo yields %d frames", n)
	}
}

// ImageFiles keeps .png, .jpg and .jpeg in any case, in name order, and
// skips hidden files, folders and other extensions.
func TestImageFiles(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"b.PNG", "a.jpeg", "c.Jpg", ".hidden.png", "notes.txt", "d.png.bak"} {
		os.WriteFile(filepath.Join(dir, n), nil, 0o644)
	}
	os.Mkdir(filepath.Join(dir, "e.png"), 0o755)
	got, err := ImageFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"a.jpeg", "b.PNG", "c.Jpg"}; !slices.Equal(got, want) {
		t.Errorf("ImageFiles: %q, want %q", got, want)
	}
	if names, err := ImageFiles(t.TempDir()); err != nil || len(names) != 0 {
		t.Errorf("empty folder: %q, %v", names, err)
	}
	if _, err := ImageFiles(filepath.Join(dir, "missing")); err == nil || !strings.HasPrefix(err.Error(), "demo: ") {
		t.Errorf("missing folder: %v", err)
	}
}

// Frames refuses an image whose header claims 60000×60000 pixels before
// decoding it.
func TestFramesHugeHeader(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "infer", "huge_header.png")) // made by make_huge_png.py there
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "huge.png"), b, 0o644)
	n := 0
	for _, err := range Frames(dir) {
		n++
		if err == nil || !strings.HasPrefix(err.Error(), "demo: ") || !strings.Contains(err.Error(), "too large") {
			t.Errorf("huge header: %v", err)
		}
	}
	if n != 1 {
		t.Errorf("%d frames, want 1 error", n)
	}
}
