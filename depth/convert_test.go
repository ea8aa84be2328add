package depth

import (
	"encoding/json"
	"image"
	"math"
	"os"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

// TestMiddleburyWorkedExample checks Z = f·B/(d + Δcx) on the Middlebury
// 2014 Motorcycle calibration (see motorcycleRig for the source):
// d = 48.9999 px gives Z ≈ 2397.82 mm, computed by hand:
// 994.978 × 193.001 / (48.9999 + 31.086) = 2397.82 mm. (That Middlebury 2014
// adds its principal-point difference to the disparity is from memory of its calibration notes; the
// numpy fixture below checks the same formula on the whole map.)
func TestMiddleburyWorkedExample(t *testing.T) {
	rig := motorcycleRig()
	z, ok := rig.DepthFromPixels(48.9999)
	if !ok {
		t.Fatal("DepthFromPixels(48.9999) not ok")
	}
	// The reference has six significant digits: half a unit in the last one.
	if mm := z * 1000; math.Abs(mm-2397.82) > 0.005 {
		t.Errorf("Z = %.4f mm, want 2397.82 mm", mm)
	}
	d, ok := rig.PixelsFromDepth(z)
	if !ok || math.Abs(d-48.9999) > 1e-9 {
		t.Errorf("PixelsFromDepth(%v) = %v, %v; want 48.9999", z, d, ok)
	}
}

// TestMotorcycleSamples compares DepthFromPixels with numpy on 40 pixels of
// the ground-truth disparity shipped by Debian python3-skimage 0.19.3
// (fixture testdata/depth/motorcycle_depth.json, made by make.py).
func TestMotorcycleSamples(t *testing.T) {
	fx := loadMotorcycleFixture(t)
	rig := motorcycleRig()
	if fx.Width != rig.Width || fx.Height != rig.Height {
		t.Fatalf("fixture size %dx%d differs from the rig's %dx%d", fx.Width, fx.Height, rig.Width, rig.Height)
	}
	for _, s := range fx.Samples {
		z, ok := rig.DepthFromPixels(s.Disp)
		if !ok || math.Abs(z-s.Depth) > 1e-12*s.Depth {
			t.Errorf("(%d, %d): d = %v px gives %v m, numpy %v m", s.X, s.Y, s.Disp, z, s.Depth)
		}
	}
}

type motorcycleFixture struct {
	Width, Height int
	Valid         int
	Mean          float64 `json:"mean_depth_m"`
	Min           float64 `json:"min_depth_m"`
	Max           float64 `json:"max_depth_m"`
	Samples       []struct {
		X, Y  int
		Disp  float64 `json:"disp_px"`
		Depth float64 `json:"depth_m"`
	}
}

func loadMotorcycleFixture(t *testing.T) *motorcycleFixture {
	t.Helper()
	data, err := os.ReadFile("../testdata/depth/motorcycle_depth.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx motorcycleFixture
	if err := json.Unmarshal(data, &fx); err != nil {
		t.Fatal(err)
	}
	return &fx
}

// TestMotorcycleReduced converts the reduced ground truth of
// testdata/motorcycle (numpy-written PFM, 370 × 250, made from the 741 × 500
// map cropped to 740 columns and halved; see its PROVENANCE.md) with the rig
// rescaled by Scaled. Halving divides both disparity and Δcx by 2, so the
// depths must stay within the full-resolution range computed by numpy, and
// their mean close to numpy's full-resolution mean. A rig that was not
// rescaled (or one that scaled only the focal length) fails both.
func TestMotorcycleReduced(t *testing.T) {
	pix, w, h, c, err := LoadPFM("../testdata/motorcycle/disp_left.pfm")
	if err != nil {
		t.Fatalf("the committed Motorcycle pair: %v", err)
	}
	if w != 370 || h != 250 || c != 1 {
		t.Fatalf("PFM %dx%dx%d, want 370x250x1", w, h, c)
	}
	inf := 0
	for _, v := range pix {
		if math.IsInf(float64(v), 1) {
			inf++
		}
	}
	// PROVENANCE.md: "unknown pixels are +Inf (12 697 of 92 500)".
	if inf != 12697 {
		t.Errorf("%d +Inf pixels, PROVENANCE.md says 12697", inf)
	}
	disp, err := NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range pix {
		disp.Set(i%w, i/w, v)
	}
	if got := disp.Valid(); got != w*h-12697 {
		t.Errorf("%d valid disparities, want %d (+Inf must be invalid)", got, w*h-12697)
	}
	crop, err := motorcycleRig().Cropped(image.Rect(0, 0, 740, 500)) // the last column was dropped
	if err != nil {
		t.Fatal(err)
	}
	rig, err := crop.Scaled(370, 250)
	if err != nil {
		t.Fatal(err)
	}
	z, err := rig.DisparityToDepth(disp)
	if err != nil {
		t.Fatal(err)
	}
	if z.Valid() != disp.Valid() {
		t.Errorf("%d valid depths from %d valid disparities", z.Valid(), disp.Valid())
	}
	fx := loadMotorcycleFixture(t)
	var sum float64
	n := 0
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			v, ok := z.At(x, y)
			if !ok {
				continue
			}
			if float64(v) < fx.Min*(1-1e-6) || float64(v) > fx.Max*(1+1e-6) {
				t.Fatalf("depth %v m at (%d, %d) outside numpy's full-resolution range [%v, %v]", v, x, y, fx.Min, fx.Max)
			}
			sum += float64(v)
			n++
		}
	}
	// Block means drop the pixels next to unknown ones, so the means differ
	// a little; 2% still separates this from a rig whose Δcx was not
	// rescaled, checked below.
	mean := sum / float64(n)
	if math.Abs(mean-fx.Mean) > 0.02*fx.Mean {
		t.Errorf("mean depth %v m, numpy's full-resolution mean %v m", mean, fx.Mean)
	}
	t.Logf("mean depth %v m at 370 x 250, numpy's full-resolution mean %v m", mean, fx.Mean)
	wrong := *rig
	wrong.DeltaCx = crop.DeltaCx
	zw, err := wrong.DisparityToDepth(disp)
	if err != nil {
		t.Fatal(err)
	}
	sum, n = 0, 0
	for i, v := range zw.Pix {
		if zw.Mask[i] != 0 {
			sum += float64(v)
			n++
		}
	}
	if mean := sum / float64(n); math.Abs(mean-fx.Mean) <= 0.02*fx.Mean {
		t.Errorf("a rig with unscaled Δcx also gives a mean of %v m: the check cannot tell them apart", mean)
	} else {
		t.Logf("mean depth with unscaled Δcx: %v m (numpy full resolution %v m)", mean, fx.Mean)
	}
}

func TestDepthFromPixelsInvalid(t *testing.T) {
	rig := motorcycleRig()
	for _, d := range []float64{0, -1, math.NaN(), math.Inf(1), math.Inf(-1), math.Copysign(0, -1)} {
		if z, ok := rig.DepthFromPixels(d); ok || z != 0 {
			t.Errorf("DepthFromPixels(%v) = %v, %v; want 0, false", d, z, ok)
		}
	}
	neg := motorcycleRig()
	neg.DeltaCx = -10
	if z, ok := neg.DepthFromPixels(5); ok {
		t.Errorf("d + Δcx < 0: got %v, ok", z)
	}
	if z, ok := neg.DepthFromPixels(10); ok {
		t.Errorf("d + Δcx = 0: got %v, ok", z)
	}
	// Beyond the rig's range: f·B/z < Δcx gives a negative disparity.
	if d, ok := rig.PixelsFromDepth(100); ok {
		t.Errorf("PixelsFromDepth(100 m) = %v, ok; want invalid (f·B/Z = 1.92 px < Δcx)", d)
	}
	for _, z := range []float64{0, -2, math.NaN(), math.Inf(1)} {
		if d, ok := rig.PixelsFromDepth(z); ok || d != 0 {
			t.Errorf("PixelsFromDepth(%v) = %v, %v; want 0, false", z, d, ok)
		}
	}
}

func TestDisparityToDepthMap(t *testing.T) {
	rig := &Rig{Width: 8, Height: 4, Baseline: 0.1, Fx: 100, Fy: 100, Cx: 3.5, Cy: 1.5, MaxDepth: 100}
	d, err := NewDisparity(image.Rect(2, 1, 6, 3)) // a sub-window of the rig's image
	if err != nil {
		t.Fatal(err)
	}
	vals := []float32{10, 0, -3, float32(math.NaN()), float32(math.Inf(1)), 5, 20, 1e-38}
	for i, v := range vals {
		d.Set(2+i%4, 1+i/4, v)
	}
	z, err := rig.DisparityToDepth(d)
	if err != nil {
		t.Fatal(err)
	}
	if z.Rect != d.Rect {
		t.Errorf("depth bounds %v, want %v", z.Rect, d.Rect)
	}
	// f·B = 10 px·m: Z = 10/d. 1e-38 px gives 1e39 m, beyond float32: invalid.
	want := []float64{1, 0, 0, 0, 0, 2, 0.5, 0}
	for i, w := range want {
		v, ok := z.At(2+i%4, 1+i/4)
		if ok != (w != 0) || (ok && math.Abs(float64(v)-w) > 1e-7) {
			t.Errorf("pixel %d: %v, %v; want %v (valid %v)", i, v, ok, w, w != 0)
		}
		if !ok && !math.IsNaN(float64(v)) && (math.IsInf(float64(v), 0)) {
			t.Errorf("pixel %d: invalid but infinite", i)
		}
	}
	back, err := rig.DepthToDisparity(z)
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range []image.Point{{2, 1}, {3, 2}, {4, 2}} {
		a, _ := d.At(p.X, p.Y)
		b, ok := back.At(p.X, p.Y)
		if !ok || math.Abs(float64(a-b)) > 1e-5 {
			t.Errorf("round trip at %v: %v → %v", p, a, b)
		}
	}
	// A depth below float32's range rounds to 0: invalid, not a valid 0.
	tiny := &Rig{Width: 8, Height: 4, Baseline: 1e-30, Fx: 1e-30, Fy: 1, Cx: 3.5, Cy: 1.5, MaxDepth: 1}
	zt, err := tiny.DisparityToDepth(d)
	if err != nil {
		t.Fatal(err)
	}
	if v, ok := zt.At(2, 1); ok {
		t.Errorf("a depth of 1e-61 m is valid as %v", v)
	}
	outside, _ := NewDisparity(image.Rect(0, 0, 9, 4))
	if _, err := rig.DisparityToDepth(outside); err == nil {
		t.Error("map wider than the rig's image: no error")
	}
}

// TestResolutionIndependence checks that a disparity given as a fraction of
// the width yields the same depth at any resolution once the rig is rescaled.
func TestResolutionIndependence(t *testing.T) {
	rig := motorcycleRig()
	const frac = 0.05
	zFull, _ := rig.DepthFromPixels(FractionToPixels(frac, rig.Width))
	for _, w := range []int{185, 370, 1482} {
		s, err := rig.Scaled(w, w*500/741)
		if err != nil {
			t.Fatal(err)
		}
		z, ok := s.DepthFromPixels(FractionToPixels(frac, w))
		if !ok || math.Abs(z-zFull) > 1e-12*zFull {
			t.Errorf("width %d: Z = %v, want %v", w, z, zFull)
		}
		if got := PixelsToFraction(FractionToPixels(frac, w), w); math.Abs(got-frac) > 1e-15 {
			t.Errorf("width %d: fraction round trip %v", w, got)
		}
	}
	if got := ScalePixels(10, 741, 370); math.Abs(got-10*370.0/741) > 1e-12 {
		t.Errorf("ScalePixels = %v", got)
	}
}

func TestDisparityFromFraction(t *testing.T) {
	im := planar.New(2, 1, 2, 4)
	copy(im.Pix[8:], []float32{0.25, 0, -0.1, float32(math.NaN()), 0.5, float32(math.Inf(1)), 0.125, 1})
	d, err := DisparityFromFraction(im, 1)
	if err != nil {
		t.Fatal(err)
	}
	want := []float32{1, 0, 0, 0, 2, 0, 0.5, 4} // × width 4; 0 = invalid
	for i, w := range want {
		v, ok := d.At(i%4, i/4)
		if ok != (w != 0) || v != w {
			t.Errorf("pixel %d: %v, %v; want %v", i, v, ok, w)
		}
	}
	frac, mask := d.Fraction(4)
	for i, w := range want {
		if mask[i] != b2f(w != 0) || frac[i] != w/4 {
			t.Errorf("Fraction pixel %d: %v (mask %v), want %v", i, frac[i], mask[i], w/4)
		}
	}
	if _, err := DisparityFromFraction(im, 2); err == nil {
		t.Error("image index out of range: no error")
	}
	if _, err := DisparityFromFraction(planar.New(1, 3, 2, 2), 0); err == nil {
		t.Error("three channels: no error")
	}
}

func b2f(b bool) float32 {
	if b {
		return 1
	}
	return 0
}

func TestMaskRange(t *testing.T) {
	rig := motorcycleRig() // range [0.5, 10] m
	z, _ := NewDepth(image.Rect(0, 0, 3, 1))
	z.Set(0, 0, 0.4)
	z.Set(1, 0, 5)
	z.Set(2, 0, 11)
	rig.MaskRange(z)
	if _, ok := z.At(0, 0); ok {
		t.Error("0.4 m kept")
	}
	if _, ok := z.At(1, 0); !ok {
		t.Error("5 m dropped")
	}
	if _, ok := z.At(2, 0); ok {
		t.Error("11 m kept")
	}
}

func TestDepthMapFromFraction(t *testing.T) {
	rig := motorcycleRig()
	// 48.9999 px at 741 px wide, as a fraction, at a quarter of the size.
	frac := float32(48.9999 / 741)
	im := planar.New(1, 1, 125, 185)
	for i := range im.Pix {
		im.Pix[i] = frac
	}
	im.Pix[7] = 0
	z, err := rig.DepthMapFromFraction(im, 0)
	if err != nil {
		t.Fatal(err)
	}
	if z.Rect != image.Rect(0, 0, 185, 125) || z.Valid() != 185*125-1 {
		t.Fatalf("bounds %v, %d valid", z.Rect, z.Valid())
	}
	// Same depth as the worked example (float32 fraction: 1e-6 relative).
	if v, _ := z.At(3, 3); math.Abs(float64(v)-2.39782) > 2.39782*1e-6+5e-6 {
		t.Errorf("depth %v m, want 2.39782 m", v)
	}
	zs, ok := rig.DepthFromFraction(48.9999 / 741)
	if !ok || math.Abs(zs-2.39782) > 5e-6 {
		t.Errorf("DepthFromFraction = %v, %v", zs, ok)
	}
	f, ok := rig.FractionFromDepth(zs)
	if !ok || math.Abs(f-48.9999/741) > 1e-12 {
		t.Errorf("FractionFromDepth = %v, %v", f, ok)
	}
}
