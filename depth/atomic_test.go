package depth

import (
	"errors"
	"image"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWriteFileAtomic checks the depth side of the shared atomic writer
// (its behaviour is tested in internal/atomicfile): the package prefix on a
// file-system error, and a writer's own error passed through unchanged.
func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	boom := errors.New("depth: boom")
	if err := writeFileAtomic(filepath.Join(dir, "x"), func(io.Writer) error { return boom }); err != boom {
		t.Errorf("error %v, want boom unchanged", err)
	}
	if err := writeFileAtomic(filepath.Join(dir, "missing", "x"), func(io.Writer) error { return nil }); err == nil || !strings.HasPrefix(err.Error(), "depth: writing ") {
		t.Errorf("missing directory: %v", err)
	}
}

func TestSaveFiles(t *testing.T) {
	dir := t.TempDir()
	pix := []float32{1, 2, 3, 4, 5, 6}
	if err := SavePFM(filepath.Join(dir, "a.pfm"), pix, 2, 1, 3); err != nil {
		t.Fatal(err)
	}
	got, w, h, c, err := LoadPFM(filepath.Join(dir, "a.pfm"))
	if err != nil || w != 2 || h != 1 || c != 3 || got[5] != 6 {
		t.Errorf("LoadPFM: %v %d %d %d %v", got, w, h, c, err)
	}
	if err := SavePFM(filepath.Join(dir, "b.pfm"), pix, 5, 5, 1); err == nil {
		t.Error("SavePFM with a wrong size: no error")
	}
	if _, err := os.Stat(filepath.Join(dir, "b.pfm")); !os.IsNotExist(err) {
		t.Error("a failed SavePFM left a file")
	}
	img, err := ColorDisparity(dispRow(1, 2, 0), nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := SavePNG(filepath.Join(dir, "c.png"), img); err != nil {
		t.Fatal(err)
	}
	f, err := os.Open(filepath.Join(dir, "c.png"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	back, err := png.Decode(f)
	if err != nil {
		t.Fatal(err)
	}
	if back.Bounds() != image.Rect(0, 0, 3, 1) {
		t.Errorf("bounds %v", back.Bounds())
	}
	if _, _, _, a := back.At(2, 0).RGBA(); a != 0 {
		t.Error("invalid pixel not transparent after saving")
	}
	for _, load := range []func(string) error{
		func(p string) error { _, err := LoadRig(p); return err },
		func(p string) error { _, _, _, _, err := LoadPFM(p); return err },
		func(p string) error { _, err := LoadPNG16(p); return err },
		func(p string) error { _, err := LoadPLY(p); return err },
	} {
		if err := load(filepath.Join(dir, "nothing")); err == nil || !strings.HasPrefix(err.Error(), "depth: ") {
			t.Errorf("missing file: %v", err)
		}
	}
}
