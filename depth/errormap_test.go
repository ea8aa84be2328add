package depth

import (
	"image"
	"testing"
)

// TestColorError: an error of top or more is the bright end of the scheme,
// an exact match the dark end, a pixel invalid in either map transparent;
// relative errors divide by the truth.
func TestColorError(t *testing.T) {
	r := image.Rect(0, 0, 4, 1)
	est, _ := NewDisparity(r)
	gt, _ := NewDisparity(r)
	for x, v := range []float32{2, 5, 3, 1} {
		est.Set(x, 0, v)
	}
	for x, v := range []float32{2, 2, 3, 0} {
		if v > 0 {
			gt.Set(x, 0, v)
		}
	}
	img, err := ColorError(&est.Map, &gt.Map, false, 3)
	if err != nil {
		t.Fatal(err)
	}
	lo, hi := img.NRGBAAt(0, 0), img.NRGBAAt(1, 0)
	lum := func(c [3]uint8) int { return int(c[0]) + int(c[1]) + int(c[2]) }
	if lum([3]uint8{hi.R, hi.G, hi.B}) <= lum([3]uint8{lo.R, lo.G, lo.B}) || lo.A != 255 || img.NRGBAAt(3, 0).A != 0 {
		t.Errorf("colours: exact %v, error 3 %v, invalid %v", lo, hi, img.NRGBAAt(3, 0))
	}
	rel, err := ColorError(&est.Map, &gt.Map, true, 1.5)
	if err != nil {
		t.Fatal(err)
	}
	if rel.NRGBAAt(1, 0) != hi { // |5−2|/2 = 1.5 = top: the bright end as well
		t.Errorf("relative error 1.5 of top 1.5: %v, want %v", rel.NRGBAAt(1, 0), hi)
	}
	if _, err := ColorError(&est.Map, &gt.Map, false, 0); err == nil {
		t.Error("top 0 accepted")
	}
}
