package demo

import (
	"bytes"
	"os"
	"path/filepath"
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
