package depth

import (
	"image"
	"image/color"
	"testing"
)

// TestScaleBar checks the band under a colour map: its size, the ramp's
// colours (the scheme's, dark at the left), that labels were drawn, and
// that NoScaleBar and narrow maps go without.
func TestScaleBar(t *testing.T) {
	d, err := NewDisparity(image.Rect(0, 0, 200, 10))
	if err != nil {
		t.Fatal(err)
	}
	for i := range d.Pix {
		d.Pix[i], d.Mask[i] = 1+float32(i%200)/10, 1
	}
	img, err := ColorDisparity(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if img.Rect != image.Rect(0, 0, 200, 10+ScaleBarHeight) {
		t.Fatalf("bounds %v", img.Rect)
	}
	if c := img.NRGBAAt(6, 13); c != DefaultCubehelix.Color(0) {
		t.Errorf("ramp's dark end %v, want %v", c, DefaultCubehelix.Color(0))
	}
	// The ramp ends before the unit "px" (2 glyphs of 7 px, 10 px margin).
	if c := img.NRGBAAt(200-10-14-1, 13); c != DefaultCubehelix.Color(1) {
		t.Errorf("ramp's bright end %v, want %v", c, DefaultCubehelix.Color(1))
	}
	white := 0
	for y := 10 + 14; y < 10+ScaleBarHeight; y++ {
		for x := range 200 {
			if img.NRGBAAt(x, y) == (color.NRGBA{255, 255, 255, 255}) {
				white++
			}
		}
	}
	if white < 40 {
		t.Errorf("%d label pixels: no text drawn", white)
	}
	plain, err := ColorDisparity(d, &ColorOptions{NoScaleBar: true})
	if err != nil || plain.Rect != d.Rect {
		t.Errorf("NoScaleBar: %v %v", plain.Rect, err)
	}
	if v := (scaleBar{at0: 20, at1: 1, inverse: true}).value(0.5); v < 1.904 || v > 1.905 {
		// 1/(1/20 + 0.5·(1 − 1/20)) = 40/21.
		t.Errorf("inverse-depth label at the middle: %v, want 40/21", v)
	}
}

// TestColorDepthInverse checks that ColorDepth is linear in inverse depth:
// between 1 m and 4 m, 1.6 m (1/1.6 halfway between 1/4 and 1/1) gets the
// middle colour.
func TestColorDepthInverse(t *testing.T) {
	z := depthRow(1, 1.6, 4)
	img, err := ColorDepth(z, nil)
	if err != nil {
		t.Fatal(err)
	}
	// λ = 0.5 falls between two entries of the 1024-level table: allow
	// one level per channel.
	near := func(a, b uint8) bool { return a-b <= 1 || b-a <= 1 }
	if c, want := img.NRGBAAt(1, 0), DefaultCubehelix.Color(0.5); !near(c.R, want.R) || !near(c.G, want.G) || !near(c.B, want.B) {
		t.Errorf("1.6 m: %v, want %v", c, want)
	}
	if c := img.NRGBAAt(0, 0); c != DefaultCubehelix.Color(1) {
		t.Errorf("nearest: %v", c)
	}
	if _, err := ColorDepth(z, &ColorOptions{Min: 0, Max: 5}); err == nil {
		t.Error("a depth range from 0: no error")
	}
}
