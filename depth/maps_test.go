package depth

import (
	"image"
	"math"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

func TestMapLayout(t *testing.T) {
	d, err := NewDepth(image.Rect(-2, 3, 3, 7)) // 5 × 4, origin not at (0, 0)
	if err != nil {
		t.Fatal(err)
	}
	if d.Stride != 5 || len(d.Pix) != 20 || len(d.Mask) != 20 || d.Valid() != 0 {
		t.Fatalf("stride %d, %d values, %d valid", d.Stride, len(d.Pix), d.Valid())
	}
	d.Set(1, 5, 2.5)
	if i := d.PixOffset(1, 5); i != 2*5+3 || d.Pix[i] != 2.5 || d.Mask[i] != 1 {
		t.Errorf("offset %d, value %v, mask %d", i, d.Pix[i], d.Mask[i])
	}
	for _, v := range []float32{0, -1, float32(math.NaN()), float32(math.Inf(1))} {
		d.Set(0, 4, v)
		if got, ok := d.At(0, 4); ok || got != 0 {
			t.Errorf("Set(%v) left %v, valid %v", v, got, ok)
		}
	}
	if _, ok := d.At(3, 5); ok {
		t.Error("At outside the bounds is valid")
	}
	d.Set(100, 100, 1) // outside: ignored, no panic
	// A sub-map keeps the coordinates and shares memory.
	s := d.SubMap(image.Rect(0, 4, 3, 7))
	if v, ok := s.At(1, 5); !ok || v != 2.5 {
		t.Errorf("sub-map At(1, 5) = %v, %v", v, ok)
	}
	s.Set(2, 6, 7)
	if v, ok := d.At(2, 6); !ok || v != 7 {
		t.Errorf("write through the sub-map not seen: %v, %v", v, ok)
	}
	if err := s.Check("sub"); err != nil {
		t.Errorf("sub-map Check: %v", err)
	}
	if s.Valid() != 2 {
		t.Errorf("sub-map has %d valid pixels, want 2", s.Valid())
	}
	if e := d.SubMap(image.Rect(50, 50, 60, 60)); !e.Rect.Empty() {
		t.Errorf("disjoint sub-map has bounds %v", e.Rect)
	}
	if _, err := NewDisparity(image.Rect(0, 0, 0, 5)); err == nil {
		t.Error("empty bounds: no error")
	}
	if _, err := NewDisparity(image.Rect(0, 0, planar.MaxSide+1, 1)); err == nil {
		t.Error("too wide: no error")
	}
}

func TestMapCheck(t *testing.T) {
	d, _ := NewDisparity(image.Rect(0, 0, 3, 2))
	d.Set(0, 0, 1)
	d.Pix[0] = float32(math.Inf(1))
	if err := d.Check("d"); err == nil {
		t.Error("Inf at a valid pixel: no error")
	}
	d.Mask[0] = 0
	if err := d.Check("d"); err != nil {
		t.Errorf("Inf at an invalid pixel: %v", err)
	}
	d.Pix = d.Pix[:5]
	if err := d.Check("d"); err == nil {
		t.Error("short Pix: no error")
	}
	var nilMap *Map
	if err := nilMap.Check("m"); err == nil {
		t.Error("nil: no error")
	}
}

func TestConfidence(t *testing.T) {
	c, _ := NewConfidence(image.Rect(0, 0, 4, 1))
	for x, v := range []float32{0.9, 0.2, 1.5, -0.1} {
		c.Set(x, 0, v)
	}
	if c.Valid() != 2 {
		t.Errorf("%d valid confidences, want 2 (outside [0, 1] is invalid)", c.Valid())
	}
	d := dispRow(1, 2, 3, 4)
	c.Threshold(&d.Map, 0.5)
	for x, want := range []bool{true, false, false, false} {
		if _, ok := d.At(x, 0); ok != want {
			t.Errorf("pixel %d valid %v, want %v", x, ok, want)
		}
	}
}

// TestDisparityClone: a clone of a sub-map has its values, validity and
// bounds, packed rows, and memory of its own.
func TestDisparityClone(t *testing.T) {
	d, err := NewDisparity(image.Rect(0, 0, 4, 3))
	if err != nil {
		t.Fatal(err)
	}
	for y := 0; y < 3; y++ {
		for x := 0; x < 4; x++ {
			if (x+y)%3 != 0 {
				d.Set(x, y, float32(10*y+x))
			}
		}
	}
	sub := d.SubMap(image.Rect(1, 1, 4, 3))
	c := sub.Clone()
	if c.Rect != sub.Rect || c.Stride != 3 || len(c.Pix) != 6 || len(c.Mask) != 6 {
		t.Fatalf("clone: bounds %v, stride %d, %d values; want %v, 3, 6", c.Rect, c.Stride, len(c.Pix), sub.Rect)
	}
	for y := 1; y < 3; y++ {
		for x := 1; x < 4; x++ {
			v, ok := c.At(x, y)
			w, wok := d.At(x, y)
			if v != w || ok != wok {
				t.Errorf("(%d, %d): clone %v, %v; original %v, %v", x, y, v, ok, w, wok)
			}
		}
	}
	c.Set(2, 2, 99)
	if v, _ := d.At(2, 2); v == 99 {
		t.Error("setting the clone changed the original")
	}
}
