package demo

import (
	"bytes"
	"os"
	"path/filepath"
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
