package planar

import (
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// The conversions below are checked against the standard library's own
// colour models (image/color), the reference for what each concrete type
// means: every fast path must agree with the generic color.NRGBA64Model path.

func fill(img interface {
	Set(x, y int, c color.Color)
	Bounds() image.Rectangle
}) {
	b := img.Bounds()
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			v := uint8((x*37 + y*91) % 256)
			img.Set(x, y, color.NRGBA{R: v, G: 255 - v, B: uint8((x * y) % 256), A: 255})
		}
	}
}

// generic hides the concrete type so FromImage takes its fallback path.
type generic struct{ image.Image }

func TestFromImageFastPathsMatchGeneric(t *testing.T) {
	// Bounds that do not start at (0, 0), as image types allow.
	r := image.Rect(-3, 5, 9, 12)
	nrgba := image.NewNRGBA(r)
	fill(nrgba)
	rgba := image.NewRGBA(r)
	fill(rgba)
	gray := image.NewGray(r)
	fill(gray)
	rgba64 := image.NewRGBA64(r)
	fill(rgba64)
	// Premultiplied 16-bit colours with partial and zero alpha, as
	// x/image/draw's scalers write them.
	translucent := image.NewRGBA64(r)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			a := uint16((x + 3) * 5461 % 65536)
			translucent.SetRGBA64(x, y, color.RGBA64{R: a / 3, G: a / 2, B: a, A: a})
		}
	}
	ycc := image.NewYCbCr(r, image.YCbCrSubsampleRatio420)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			ycc.Y[ycc.YOffset(x, y)] = uint8(x*11 + y*7)
			ycc.Cb[ycc.COffset(x, y)] = uint8(x * 5)
			ycc.Cr[ycc.COffset(x, y)] = uint8(200 - y*3)
		}
	}
	// A sub-image exercises a Rect that differs from the parent's.
	sub := nrgba.SubImage(image.Rect(0, 6, 7, 11)).(*image.NRGBA)
	for _, tc := range []struct {
		name string
		img  image.Image
	}{{"NRGBA", nrgba}, {"RGBA", rgba}, {"Gray", gray}, {"YCbCr", ycc}, {"NRGBA sub-image", sub},
		{"RGBA64", rgba64}, {"RGBA64 translucent", translucent}} {
		fast, err := FromImage(tc.img)
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		slow, err := FromImage(generic{tc.img})
		if err != nil {
			t.Fatalf("%s generic: %v", tc.name, err)
		}
		b := tc.img.Bounds()
		if fast.N != 1 || fast.C != 3 || fast.H != b.Dy() || fast.W != b.Dx() {
			t.Fatalf("%s: shape %s, want 1x3x%dx%d", tc.name, fast.Shape(), b.Dy(), b.Dx())
		}
		for i := range fast.Pix {
			// 8-bit values through /255 and 16-bit values through /65535 agree
			// to float32 rounding; YCbCr's conversion rounds to 8 bits first
			// in the fast path, hence one grey level of slack there.
			tol := 1e-6
			if tc.name == "YCbCr" {
				tol = 1.0/255 + 1e-6
			}
			// color.NRGBA64Model un-premultiplies with an integer division
			// (r·0xffff/a, truncated), the fast path in float32: up to one
			// 16-bit level apart.
			if tc.name == "RGBA64 translucent" {
				tol = 1.0/65535 + 1e-6
			}
			if d := math.Abs(float64(fast.Pix[i] - slow.Pix[i])); d > tol {
				t.Fatalf("%s: element %d fast %v generic %v", tc.name, i, fast.Pix[i], slow.Pix[i])
			}
		}
		// Spot-check one pixel against color.NRGBAModel directly.
		c := color.NRGBAModel.Convert(tc.img.At(b.Min.X+1, b.Min.Y+2)).(color.NRGBA)
		got := fast.At(0, 0, 2, 1)
		if tc.name != "YCbCr" && tc.name != "RGBA64 translucent" && math.Abs(float64(got)-float64(c.R)/255) > 1e-6 {
			t.Errorf("%s: R at (1,2) = %v, want %v", tc.name, got, float64(c.R)/255)
		}
	}
}

func TestFromImagePremultipliedAlpha(t *testing.T) {
	// image.RGBA stores premultiplied colour: (100, 50, 0, 128) is the
	// un-premultiplied colour (100/128, 50/128, 0) (image/color docs).
	img := image.NewRGBA(image.Rect(0, 0, 1, 1))
	img.Pix = []uint8{100, 50, 0, 128}
	p, err := FromImage(img)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(float64(p.Pix[0])-100.0/128) > 1e-6 || math.Abs(float64(p.Pix[1])-50.0/128) > 1e-6 || p.Pix[2] != 0 {
		t.Fatalf("got %v, want [%v %v 0]", p.Pix, 100.0/128, 50.0/128)
	}
}

func TestFromImageErrors(t *testing.T) {
	if _, err := FromImage(nil); err == nil || !strings.HasPrefix(err.Error(), "planar: ") {
		t.Errorf("nil image: err = %v", err)
	}
	if _, err := FromImage(image.NewNRGBA(image.Rect(4, 4, 4, 9))); err != ErrEmpty {
		t.Errorf("empty image: err = %v, want ErrEmpty", err)
	}
}

func TestNewCheckedAndCheck(t *testing.T) {
	for _, s := range [][4]int{{0, 1, 1, 1}, {1, -1, 1, 1}, {1, 1, 1 << 15, 1 << 15}} {
		if _, err := NewChecked(s[0], s[1], s[2], s[3]); err == nil {
			t.Errorf("NewChecked%v: no error", s)
		}
	}
	m := New(2, 3, 4, 5)
	if err := m.Check("x"); err != nil {
		t.Fatal(err)
	}
	m.Pix = m.Pix[:10]
	if err := m.Check("x"); err == nil || !strings.Contains(err.Error(), "10 values") {
		t.Errorf("short Pix: err = %v", err)
	}
	var nilImg *Image
	if err := nilImg.Check("x"); err == nil {
		t.Error("nil image passed Check")
	}
}

func TestIndexLayoutAndCheckFinite(t *testing.T) {
	m := New(2, 3, 4, 5)
	// NCHW: ((n*C+c)*H+y)*W+x (the layout stated in doc.go).
	if got, want := m.Index(1, 2, 3, 4), ((1*3+2)*4+3)*5+4; got != want {
		t.Fatalf("Index = %d, want %d", got, want)
	}
	m.Set(1, 2, 3, 1, float32(math.NaN()))
	err := m.CheckFinite("disparity")
	if err == nil || !strings.Contains(err.Error(), "n=1, c=2, y=3, x=1") {
		t.Fatalf("CheckFinite: %v", err)
	}
	it := m.Item(1)
	if it.N != 1 || &it.Pix[0] != &m.Pix[m.Index(1, 0, 0, 0)] {
		t.Fatal("Item does not share the batch's storage")
	}
}

// allFinite agrees with math.IsNaN and math.IsInf: each special value at
// each position of slices of 0 to 9 values (the unrolled loop and its
// tail), and a million random bit patterns one at a time.
func TestAllFinite(t *testing.T) {
	ref := func(p []float32) bool {
		for _, v := range p {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return false
			}
		}
		return true
	}
	specials := []uint32{0x7f800000, 0xff800000, 0x7fc00000, 0xffc00000, 0x7f800001, 0x7fffffff, // ±Inf, NaNs
		0x7f7fffff, 0xff7fffff, 0x00000001, 0x80000001, 0x00800000, 0x80000000, 0x3f800000} // finite: ±max, subnormals, min normal, −0, 1
	for n := range 10 {
		for pos := range n {
			for _, bits := range specials {
				p := make([]float32, n)
				for i := range p {
					p[i] = 0.5
				}
				p[pos] = math.Float32frombits(bits)
				if got, want := allFinite(p), ref(p); got != want {
					t.Fatalf("%d values, %#08x at %d: allFinite %v, want %v", n, bits, pos, got, want)
				}
			}
		}
	}
	if !allFinite(nil) {
		t.Fatal("allFinite(nil) = false, want true (no value is non-finite)")
	}
	rng := rand.New(rand.NewPCG(1, 2))
	// Random patterns in runs of 7: every lane of the unrolled loop and the tail.
	for range 1 << 16 {
		p := make([]float32, 7)
		for i := range p {
			p[i] = math.Float32frombits(rng.Uint32() &^ (uint32(rng.IntN(2)) << 30)) // half with a small exponent
		}
		if got, want := allFinite(p), ref(p); got != want {
			t.Fatalf("%v: allFinite %v, want %v", p, got, want)
		}
	}
	var bad int
	for range 1 << 20 {
		p := []float32{math.Float32frombits(rng.Uint32())}
		if got, want := allFinite(p), ref(p); got != want {
			t.Fatalf("%#08x: allFinite %v, want %v", math.Float32bits(p[0]), got, want)
		}
		if !ref(p) {
			bad++
		}
	}
	// 2 × 2^23 of the 2^32 patterns are not finite: about 2^12 of 2^20.
	if bad < 3000 || bad > 5300 {
		t.Errorf("%d non-finite patterns of 2^20 random ones, want about 4096", bad)
	}
}

func TestToNRGBARoundTrip(t *testing.T) {
	src := image.NewNRGBA(image.Rect(0, 0, 7, 3))
	fill(src)
	p, err := FromImage(src)
	if err != nil {
		t.Fatal(err)
	}
	back := p.ToNRGBA(0)
	for i := range src.Pix {
		if src.Pix[i] != back.Pix[i] {
			t.Fatalf("byte %d: %d became %d", i, src.Pix[i], back.Pix[i])
		}
	}
}

func TestFromImageInto(t *testing.T) {
	src := image.NewRGBA64(image.Rect(2, 3, 6, 5))
	for y := 3; y < 5; y++ {
		for x := 2; x < 6; x++ {
			a := uint16(9000*x + 7000*y)
			src.SetRGBA64(x, y, color.RGBA64{R: a / 5, G: a - 1, B: a / 2, A: a})
		}
	}
	src.SetRGBA64(3, 4, color.RGBA64{}) // fully transparent
	want, err := FromImage(generic{src})
	if err != nil {
		t.Fatal(err)
	}
	dst := New(1, 3, 2, 4)
	for i := range dst.Pix {
		dst.Pix[i] = 7 // stale values must all be overwritten
	}
	if err := FromImageInto(dst, src); err != nil {
		t.Fatal(err)
	}
	for i := range dst.Pix {
		// One 16-bit level: the generic path truncates when it divides by alpha.
		if d := math.Abs(float64(dst.Pix[i] - want.Pix[i])); d > 1.0/65535+1e-6 {
			t.Fatalf("element %d = %v, generic path %v", i, dst.Pix[i], want.Pix[i])
		}
	}
	if n := testing.AllocsPerRun(10, func() { FromImageInto(dst, src) }); n != 0 {
		t.Errorf("FromImageInto allocates %v times on a fast path", n)
	}
	for _, bad := range []*Image{nil, New(1, 3, 4, 2), New(2, 3, 2, 4), New(1, 1, 2, 4), {N: 1, C: 3, H: 2, W: 4}} {
		if err := FromImageInto(bad, src); err == nil || !strings.HasPrefix(err.Error(), "planar: ") {
			t.Errorf("destination %+v: error %v", bad, err)
		}
	}
	if err := FromImageInto(dst, nil); err == nil {
		t.Error("nil image accepted")
	}
}

// TestCheckInput: the shape check of a fixed-size input comes between
// Check's and CheckFinite's, each error naming the input.
func TestCheckInput(t *testing.T) {
	m := New(1, 3, 4, 5)
	if err := m.CheckInput("img", 1, 3, 4, 5); err != nil {
		t.Fatal(err)
	}
	var nilImg *Image
	if err := nilImg.CheckInput("img", 1, 3, 4, 5); err == nil || err.Error() != "img is nil" {
		t.Errorf("nil image: %v", err)
	}
	if err := m.CheckInput("img", 2, 3, 4, 5); err == nil || err.Error() != "img has shape 1x3x4x5, want 2x3x4x5" {
		t.Errorf("wrong shape: %v", err)
	}
	m.Pix[7] = float32(math.NaN())
	if err := m.CheckInput("img", 2, 3, 4, 5); err == nil || !strings.Contains(err.Error(), "want 2x3x4x5") {
		t.Errorf("wrong shape and NaN: %v; want the shape named first", err)
	}
	if err := m.CheckInput("img", 1, 3, 4, 5); err == nil || !strings.Contains(err.Error(), "img has a non-finite value NaN at (n=0, c=0, y=1, x=2)") {
		t.Errorf("NaN: %v", err)
	}
}

// TestCheckPair: each view is checked as CheckInput checks it, the left
// one first, each error naming its view.
func TestCheckPair(t *testing.T) {
	l, r := New(1, 3, 4, 5), New(1, 3, 4, 5)
	if err := CheckPair(l, r, 1, 3, 4, 5); err != nil {
		t.Fatal(err)
	}
	if err := CheckPair(l, New(1, 3, 4, 6), 1, 3, 4, 5); err == nil || err.Error() != "right image has shape 1x3x4x6, want 1x3x4x5" {
		t.Errorf("narrow right view: %v", err)
	}
	if err := CheckPair(nil, nil, 1, 3, 4, 5); err == nil || err.Error() != "left image is nil" {
		t.Errorf("no views: %v; want the left one named", err)
	}
}

// BenchmarkCheckFinite checks a stereo network's input at 256×128 (two
// views of a pair and of its mirror, 3 channels).
func BenchmarkCheckFinite(b *testing.B) {
	m := New(4, 3, 128, 256)
	for i := range m.Pix {
		m.Pix[i] = float32(i%255) / 255
	}
	b.ReportAllocs()
	for b.Loop() {
		if err := m.CheckFinite("input"); err != nil {
			b.Fatal(err)
		}
	}
}
