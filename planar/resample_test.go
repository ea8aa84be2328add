package planar

import (
	"image"
	"image/color"
	"image/draw"
	"math/rand/v2"
	"testing"

	xdraw "golang.org/x/image/draw"
)

// onlyImage hides every method but image.Image's, so that the scaling under
// test and golang.org/x/image/draw both take their generic path.
type onlyImage struct{ image.Image }

// testImages returns w × h images of every source type Resampler reads
// directly, and of the generic path, filled from rng (with transparent,
// translucent and opaque pixels where the type has alpha).
func testImages(rng *rand.Rand, w, h int) map[string]image.Image {
	r := image.Rect(3, 5, 3+w, 5+h) // bounds that do not start at (0, 0)
	alpha := func() uint8 {
		switch rng.IntN(4) {
		case 0:
			return 0
		case 1:
			return uint8(rng.IntN(256))
		}
		return 255
	}
	rgba, nrgba, gray := image.NewRGBA(r), image.NewNRGBA(r), image.NewGray(r)
	rgba64, nrgba64 := image.NewRGBA64(r), image.NewNRGBA64(r)
	y420, y411 := image.NewYCbCr(r, image.YCbCrSubsampleRatio420), image.NewYCbCr(r, image.YCbCrSubsampleRatio411)
	pal := image.NewPaletted(r, color.Palette{color.Black, color.White, color.NRGBA{200, 30, 90, 128}, color.RGBA{10, 200, 40, 255}})
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			a := alpha()
			rgba.SetRGBA(x, y, color.RGBA{uint8(rng.IntN(int(a) + 1)), uint8(rng.IntN(int(a) + 1)), uint8(rng.IntN(int(a) + 1)), a})
			nrgba.SetNRGBA(x, y, color.NRGBA{uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256)), alpha()})
			gray.SetGray(x, y, color.Gray{uint8(rng.IntN(256))})
			a16 := uint16(rng.IntN(65536))
			rgba64.SetRGBA64(x, y, color.RGBA64{uint16(rng.IntN(int(a16) + 1)), uint16(rng.IntN(int(a16) + 1)), uint16(rng.IntN(int(a16) + 1)), a16})
			nrgba64.SetNRGBA64(x, y, color.NRGBA64{uint16(rng.IntN(65536)), uint16(rng.IntN(65536)), uint16(rng.IntN(65536)), 0xffff})
			pal.SetColorIndex(x, y, uint8(rng.IntN(4)))
		}
	}
	for _, yc := range []*image.YCbCr{y420, y411} {
		for i := range yc.Y {
			yc.Y[i] = uint8(rng.IntN(256))
		}
		for i := range yc.Cb {
			yc.Cb[i], yc.Cr[i] = uint8(rng.IntN(256)), uint8(rng.IntN(256))
		}
	}
	return map[string]image.Image{"RGBA": rgba, "NRGBA": nrgba, "Gray": gray, "RGBA64": rgba64, "NRGBA64": nrgba64,
		"YCbCr420": y420, "YCbCr411": y411, "Paletted": pal, "generic": onlyImage{nrgba}}
}

// xdrawReference is the resampling that Resampler replaces: x/image/draw's
// CatmullRom into an *image.RGBA64 (image/draw.Draw at the same size), then
// FromImageInto.
func xdrawReference(t *testing.T, img image.Image, w, h int) *Image {
	t.Helper()
	dst64 := image.NewRGBA64(image.Rect(0, 0, w, h))
	if b := img.Bounds(); b.Dx() == w && b.Dy() == h {
		draw.Draw(dst64, dst64.Rect, img, b.Min, draw.Src)
	} else {
		xdraw.CatmullRom.Scale(dst64, dst64.Rect, img, b, xdraw.Src, nil)
	}
	out := New(1, 3, h, w)
	if err := FromImageInto(out, dst64); err != nil {
		t.Fatal(err)
	}
	return out
}

// TestResamplerMatchesXDraw checks Resampler bit for bit against
// golang.org/x/image/draw (the module's go.mod version) followed by
// FromImageInto, for every source type, shrinking (by non-integer and
// integer factors), enlarging, mixed, and the same size, with one
// Resampler reused across source sizes.
func TestResamplerMatchesXDraw(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 9))
	const w, h = 32, 24
	rs, err := NewResampler(w, h)
	if err != nil {
		t.Fatal(err)
	}
	for _, src := range [][2]int{{40, 30}, {64, 48}, {13, 7}, {57, 11}, {32, 24}, {40, 30}, {97, 61}} {
		for name, img := range testImages(rng, src[0], src[1]) {
			want := xdrawReference(t, img, w, h)
			got := New(1, 3, h, w)
			for i := range got.Pix {
				got.Pix[i] = -1 // every value must be written
			}
			if err := rs.Scale(got, img); err != nil {
				t.Fatalf("%s %v: %v", name, src, err)
			}
			for i, v := range got.Pix {
				if v != want.Pix[i] {
					t.Fatalf("%s %dx%d → %dx%d: value %d (channel %d, y %d, x %d) is %v, x/image/draw gives %v",
						name, src[0], src[1], w, h, i, i/(w*h), i%(w*h)/w, i%w, v, want.Pix[i])
				}
			}
		}
	}
}

// TestResamplerSameSize: at the target size the copy Resampler makes is
// also what x/image/draw's CatmullRom gives when asked to scale by 1 (the
// path model/adapt took), and a reused Resampler allocates nothing.
func TestResamplerSameSize(t *testing.T) {
	const w, h = 24, 16
	rs, err := NewResampler(w, h)
	if err != nil {
		t.Fatal(err)
	}
	got := New(1, 3, h, w)
	for name, img := range testImages(rand.New(rand.NewPCG(2, 7)), w, h) {
		dst64 := image.NewRGBA64(image.Rect(0, 0, w, h))
		xdraw.CatmullRom.Scale(dst64, dst64.Rect, img, img.Bounds(), xdraw.Src, nil)
		want := New(1, 3, h, w)
		if err := FromImageInto(want, dst64); err != nil {
			t.Fatal(err)
		}
		if err := rs.Scale(got, img); err != nil {
			t.Fatal(err)
		}
		for i, v := range got.Pix {
			if v != want.Pix[i] {
				t.Fatalf("%s: value %d is %v, CatmullRom at scale 1 gives %v", name, i, v, want.Pix[i])
			}
		}
	}
	big := testImages(rand.New(rand.NewPCG(3, 1)), 50, 37)["NRGBA"]
	if n := testing.AllocsPerRun(5, func() { _ = rs.Scale(got, big) }); n != 0 {
		t.Errorf("Scale allocates %v times a call once warmed up", n)
	}
}

func TestResamplerErrors(t *testing.T) {
	if _, err := NewResampler(0, 5); err == nil {
		t.Error("NewResampler(0, 5): no error")
	}
	rs, err := NewResampler(8, 4)
	if err != nil {
		t.Fatal(err)
	}
	img := image.NewGray(image.Rect(0, 0, 16, 8))
	for name, c := range map[string]struct {
		dst *Image
		img image.Image
	}{
		"nil image":   {New(1, 3, 4, 8), nil},
		"empty image": {New(1, 3, 4, 8), image.NewGray(image.Rect(0, 0, 0, 8))},
		"wrong shape": {New(1, 3, 8, 16), img},
		"one channel": {New(1, 1, 4, 8), img},
		"nil dst":     {nil, img},
	} {
		if err := rs.Scale(c.dst, c.img); err == nil {
			t.Errorf("%s: no error", name)
		}
	}
}

func BenchmarkResampler640x480To512x384(b *testing.B) {
	img := testImages(rand.New(rand.NewPCG(1, 1)), 640, 480)["RGBA"]
	rs, err := NewResampler(512, 384)
	if err != nil {
		b.Fatal(err)
	}
	dst := New(1, 3, 384, 512)
	b.ReportAllocs()
	for b.Loop() {
		if err := rs.Scale(dst, img); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkXDraw640x480To512x384(b *testing.B) {
	img := testImages(rand.New(rand.NewPCG(1, 1)), 640, 480)["RGBA"]
	dst64 := image.NewRGBA64(image.Rect(0, 0, 512, 384))
	dst := New(1, 3, 384, 512)
	b.ReportAllocs()
	for b.Loop() {
		xdraw.CatmullRom.Scale(dst64, dst64.Rect, img, img.Bounds(), xdraw.Src, nil)
		if err := FromImageInto(dst, dst64); err != nil {
			b.Fatal(err)
		}
	}
}
