package label

import (
	"image"
	"image/color"
	"testing"
)

// inked returns the bounds of the pixels that are not white.
func inked(img *image.NRGBA) image.Rectangle {
	var r image.Rectangle
	for y := img.Rect.Min.Y; y < img.Rect.Max.Y; y++ {
		for x := img.Rect.Min.X; x < img.Rect.Max.X; x++ {
			if img.NRGBAAt(x, y) != (color.NRGBA{255, 255, 255, 255}) {
				r = r.Union(image.Rect(x, y, x+1, y+1))
			}
		}
	}
	return r
}

func page() *image.NRGBA {
	img := image.NewNRGBA(image.Rect(0, 0, 120, 120))
	for i := range img.Pix {
		img.Pix[i] = 255
	}
	return img
}

// Draw places the text by its alignment within the 7-pixel advance of the
// face (10 letters: 70 pixels); DrawUp turns it to a band 13 pixels wide
// and 70 high centred on the row asked for.
func TestDrawPlacement(t *testing.T) {
	const s = "0123456789"
	if Width(s) != 70 {
		t.Fatalf("Width %d, want 70 (basicfont 7x13 advances 7 pixels)", Width(s))
	}
	black := color.NRGBA{0, 0, 0, 255}
	for _, tc := range []struct {
		align  Align
		lo, hi int // the inked columns must lie in [lo, hi)
	}{{Left, 20, 90}, {Center, 60 - 35, 60 + 35}, {Right, 100 - 70, 100}} {
		img := page()
		x := map[Align]int{Left: 20, Center: 60, Right: 100}[tc.align]
		Draw(img, s, x, 50, tc.align, black)
		r := inked(img)
		if r.Empty() || r.Min.X < tc.lo || r.Max.X > tc.hi || r.Max.Y > 50+Face.Descent || r.Min.Y < 50-Face.Ascent {
			t.Errorf("align %d: ink in %v, want columns [%d, %d) and rows around baseline 50", tc.align, r, tc.lo, tc.hi)
		}
	}
	img := page()
	DrawUp(img, s, 10, 60, black)
	r := inked(img)
	if r.Empty() || r.Min.X < 10 || r.Max.X > 10+Height || r.Min.Y < 60-35 || r.Max.Y > 60+35 || r.Dy() < 50 {
		t.Errorf("DrawUp: ink in %v, want a band in columns [10, 23) and rows [25, 95)", r)
	}
}
