package sgm

import (
	"context"
	"image"
	"math"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
)

func match(t *testing.T, o *Options, left, right image.Image) *Result {
	t.Helper()
	m, err := NewMatcher(o)
	if err != nil {
		t.Fatal(err)
	}
	r, err := m.Match(context.Background(), left, right)
	if err != nil {
		t.Fatal(err)
	}
	return r
}

// region counts, over columns [x0, x1) of every row, the valid pixels and
// those within tol of want.
func region(d *depth.Disparity, x0, x1 int, want, tol float64) (valid, close, total int) {
	for y := d.Rect.Min.Y; y < d.Rect.Max.Y; y++ {
		for x := x0; x < x1; x++ {
			total++
			if v, ok := d.At(x, y); ok {
				valid++
				if math.Abs(float64(v)-want) <= tol {
					close++
				}
			}
		}
	}
	return
}

// A fronto-parallel plane has one disparity everywhere (common practice):
// every pixel whose match lies inside the right image, away from the
// census window's reach of the border, must find it; the sub-pixel fit
// locks towards integers by up to about 0.2 px on average.
func TestFrontoParallelPlane(t *testing.T) {
	const w, h = 120, 60
	for _, c := range []struct {
		d, tol float64
		share  int // percent of the pixels within tol
	}{{9, 0.25, 98}, {6.3, 0.4, 95}, {17.5, 0.4, 95}} {
		l, r := plane(w, h, c.d, newSmooth(3))
		res := match(t, &Options{MaxDisparity: 31}, l, r)
		x0 := int(math.Ceil(c.d)) + DefaultCensusWidth
		valid, close, total := region(res.Disparity, x0, w-DefaultCensusWidth, c.d, c.tol)
		t.Logf("d %v: %d of %d valid, %d within %v px", c.d, valid, total, close, c.tol)
		if valid < total*99/100 || close < total*c.share/100 {
			t.Errorf("plane at d = %v: %d of %d pixels valid, %d within %v px; want ≥ 99%% and ≥ %d%%", c.d, valid, total, close, c.tol, c.share)
		}
		// Left of column d the match lies outside the right image.
		for y := range h {
			for x := range int(c.d) - 1 {
				if v, ok := res.Disparity.At(x, y); ok && v > float32(x)+1 {
					t.Fatalf("pixel (%d, %d) has disparity %v: its match is outside the right image", x, y, v)
				}
			}
		}
	}
}

// stepPair renders a background plane at disparity bg and, over the left
// image's columns x ≥ edge, a foreground plane at fg with another pattern.
func stepPair(w, h, edge int, bg, fg float64) (left, right *image.Gray) {
	b, f := newSmooth(5), newSmooth(6)
	e := float64(edge)
	left = render(w, h, func(x, y float64) float64 {
		if x >= e {
			return f.at(x, y)
		}
		return b.at(x, y)
	})
	right = render(w, h, func(x, y float64) float64 {
		if x+fg >= e {
			return f.at(x+fg, y)
		}
		return b.at(x+bg, y)
	})
	return left, right
}

// A step edge between planes at disparities 4 and 12: both sides found, the
// background pixels hidden in the right view (the 8 columns left of the
// edge) mostly refused, and the hole fill gives them the background.
func TestStepEdge(t *testing.T) {
	const w, h, edge, bg, fg = 160, 60, 80, 4.0, 12.0
	l, r := stepPair(w, h, edge, bg, fg)
	res := match(t, &Options{MaxDisparity: 31}, l, r)
	d := res.Disparity
	const margin = DefaultCensusWidth
	if valid, close, total := region(d, int(bg)+margin, edge-int(fg-bg)-margin, bg, 0.5); close < total*98/100 {
		t.Errorf("background: %d of %d valid, %d within 0.5 px of %v; want ≥ 98%%", valid, total, close, bg)
	}
	if valid, close, total := region(d, edge+margin, w-margin, fg, 0.5); close < total*98/100 {
		t.Errorf("foreground: %d of %d valid, %d within 0.5 px of %v; want ≥ 98%%", valid, total, close, fg)
	}
	// The occluded band: left pixels whose right match is covered by the
	// foreground. Report how many are kept with a wrong disparity.
	o0, o1 := edge-int(fg-bg), edge
	wrong, total := 0, 0
	for y := range h {
		for x := o0; x < o1; x++ {
			total++
			if v, ok := d.At(x, y); ok && math.Abs(float64(v)-bg) > 1 {
				wrong++
			}
		}
	}
	t.Logf("occluded band: %d of %d pixels valid with an error > 1 px", wrong, total)
	if wrong > total/5 {
		t.Errorf("occluded band: %d of %d pixels kept with a disparity more than 1 px from the background; want ≤ 20%%", wrong, total)
	}
	if _, err := FillHoles(d); err != nil {
		t.Fatal(err)
	}
	// The background's last valid pixels before the band see the
	// foreground in their census window and lean towards it by about a
	// pixel; the fill repeats them.
	if valid, close, total := region(d, o0, o1, bg, 1.5); close < total*75/100 {
		t.Errorf("occluded band after FillHoles: %d of %d valid, %d within 1.5 px of the background; want ≥ 75%%", valid, total, close)
	}
}

// A region without texture carries no match of its own: with MinTexture
// its pixels are refused; an image without any texture is refused
// everywhere by the uniqueness check.
func TestTextureless(t *testing.T) {
	const w, h, d = 140, 80, 6.0
	s := newSmooth(7)
	flat := func(x, y float64) bool { return x >= 40 && x < 100 && y >= 15 && y < 65 }
	l := render(w, h, func(x, y float64) float64 {
		if flat(x, y) {
			return 128
		}
		return s.at(x, y)
	})
	r := render(w, h, func(x, y float64) float64 {
		if flat(x+d, y) {
			return 128
		}
		return s.at(x+d, y)
	})
	res := match(t, &Options{MaxDisparity: 31, MinTexture: 1}, l, r)
	inside, kept := 0, 0
	for y := 15 + 3; y < 65-3; y++ {
		for x := 40 + 4; x < 100-4; x++ {
			inside++
			if _, ok := res.Disparity.At(x, y); ok {
				kept++
			}
		}
	}
	if kept != 0 {
		t.Errorf("MinTexture 1: %d of %d pixels inside the flat region kept", kept, inside)
	}
	valid, close, total := region(res.Disparity, 10, 35, d, 0.5)
	if close < total*97/100 {
		t.Errorf("textured part: %d of %d valid, %d within 0.5 px; want ≥ 97%%", valid, total, close)
	}
	grey := render(w, h, func(x, y float64) float64 { return 90 })
	if n := match(t, nil, grey, grey).Disparity.Valid(); n != 0 {
		t.Errorf("uniform images: %d valid pixels, want 0", n)
	}
}

// The census cost depends only on the order of grey levels, so an exposure
// change that keeps that order (gain 1.1 and offset 10 on levels ≤ 220,
// strictly increasing on integers) gives the same bits.
func TestExposureInvariance(t *testing.T) {
	l, r := plane(100, 50, 7.4, newSmooth(9))
	r2 := image.NewGray(r.Rect)
	for i, v := range r.Pix {
		r2.Pix[i] = uint8(math.Round(1.1*float64(v) + 10))
	}
	a := match(t, &Options{MaxDisparity: 31}, l, r)
	b := match(t, &Options{MaxDisparity: 31}, l, r2)
	if !sameResult(a, b) {
		t.Error("an order-preserving exposure change of the right image changed the result")
	}
}

func sameResult(a, b *Result) bool {
	for i := range a.Disparity.Pix {
		if math.Float32bits(a.Disparity.Pix[i]) != math.Float32bits(b.Disparity.Pix[i]) || a.Disparity.Mask[i] != b.Disparity.Mask[i] ||
			math.Float32bits(a.Confidence.Pix[i]) != math.Float32bits(b.Confidence.Pix[i]) {
			return false
		}
	}
	return true
}
