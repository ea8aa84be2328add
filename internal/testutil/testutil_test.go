package testutil

import (
	"fmt"
	"image"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"testing"
)

// TestPlanar: a written PNG comes back with its values scaled to [0, 1] in
// planar's channel-major layout (R, then G, then B planes).
func TestPlanar(t *testing.T) {
	img := image.NewNRGBA(image.Rect(0, 0, 2, 1))
	img.Set(0, 0, color.NRGBA{255, 0, 51, 255})
	img.Set(1, 0, color.NRGBA{0, 102, 0, 255})
	p := filepath.Join(t.TempDir(), "a.png")
	f, _ := os.Create(p)
	if err := png.Encode(f, img); err != nil {
		t.Fatal(err)
	}
	f.Close()
	im := Planar(t, p)
	want := []float32{1, 0, 0, 102.0 / 255, 51.0 / 255, 0}
	if im.C != 3 || im.H != 1 || im.W != 2 || len(im.Pix) != len(want) {
		t.Fatalf("shape %dx%dx%d", im.C, im.H, im.W)
	}
	for i, v := range want {
		if d := im.Pix[i] - v; d > 1e-6 || d < -1e-6 {
			t.Errorf("pix[%d] = %v, want %v", i, im.Pix[i], v)
		}
	}
}

// fatalRecorder records Fatalf instead of stopping the test.
type fatalRecorder struct {
	testing.TB
	msg string
}

func (f *fatalRecorder) Fatalf(format string, args ...any) { f.msg = fmt.Sprintf(format, args...) }

// TestGolden: -update writes the file, an equal file passes, a different
// one fails naming the file and the hint.
func TestGolden(t *testing.T) {
	p := filepath.Join(t.TempDir(), "g.json")
	Golden(t, p, []byte("one\n"), true, "-update")
	Golden(t, p, []byte("one\n"), false, "-update")
	r := &fatalRecorder{TB: t}
	Golden(r, p, []byte("two\n"), false, "-update")
	if want := p + " is stale: rerun -update"; r.msg != want {
		t.Errorf("message %q, want %q", r.msg, want)
	}
}
