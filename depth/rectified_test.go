package depth

import (
	"bytes"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"image"
	"image/color"
	"image/jpeg"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// rectifiedPairs are the committed rectified pairs: the six synthetic ones
// of testdata/synth (package synth) and the two Middlebury 2014 pairs.
var rectifiedPairs = []string{
	"synth/greenhouse/%s/000000.png", "synth/greenhouse/%s/000001.png", "synth/greenhouse/%s/000002.png",
	"synth/storage/%s/000000.png", "synth/storage/%s/000001.png", "synth/storage/%s/000002.png",
	"motorcycle/%s.png", "aloe/%s.png",
}

func loadPNG(t *testing.T, path string) image.Image { return testutil.PNG(t, path) }

func loadPair(t *testing.T, pattern string) (image.Image, image.Image) {
	p := filepath.Join("..", "testdata", pattern)
	return loadPNG(t, strings.Replace(p, "%s", "left", 1)),
		loadPNG(t, strings.Replace(p, "%s", "right", 1))
}

// shiftRows returns img moved down by s pixels (up for s < 0), each output
// row linearly interpolated between the two nearest source rows, the
// border rows repeated: a vertical misalignment of the camera.
func shiftRows(img image.Image, s float64) *image.RGBA64 {
	b := img.Bounds()
	out := image.NewRGBA64(image.Rect(0, 0, b.Dx(), b.Dy()))
	for y := range b.Dy() {
		src := float64(y) - s
		y0 := int(math.Floor(src))
		f := src - float64(y0)
		clamp := func(v int) int { return b.Min.Y + max(0, min(b.Dy()-1, v)) }
		for x := range b.Dx() {
			r0, g0, b0, a0 := img.At(b.Min.X+x, clamp(y0)).RGBA()
			r1, g1, b1, a1 := img.At(b.Min.X+x, clamp(y0+1)).RGBA()
			mix := func(p, q uint32) uint16 { return uint16(math.Round((1-f)*float64(p) + f*float64(q))) }
			out.SetRGBA64(x, y, color.RGBA64{mix(r0, r1), mix(g0, g1), mix(b0, b1), mix(a0, a1)})
		}
	}
	return out
}

// TestVerticalShiftInjected measures the detector on our rectified pairs
// with a vertical shift injected into the right view (shiftRows): the
// injected shift is the reference. Every shift of up to 5 px is measured
// within 0.25 px; CheckRectified passes shifts of up to 0.5 px and refuses
// those of 1.5 px or more.
func TestVerticalShiftInjected(t *testing.T) {
	for _, pair := range rectifiedPairs {
		left, right := loadPair(t, pair)
		var got []float64
		for _, s := range []float64{0, 0.5, -0.5, 1, -1, 1.5, 2, -3, 5} {
			r, err := VerticalShift(left, shiftRows(right, s), 0)
			if err != nil {
				t.Fatal(err)
			}
			got = append(got, r.DY)
			if !r.Found || math.Abs(r.DY-s) > 0.25 {
				t.Errorf("%s shifted %v px: measured %v (match %.3f, found %v)", pair, s, r.DY, r.Match, r.Found)
			}
			err = CheckRectified(left, shiftRows(right, s), 0)
			if math.Abs(s) != 1 && (err != nil) != (math.Abs(s) >= 1.5) { // at 1 px, the tolerance itself, either verdict
				t.Errorf("%s shifted %v px: CheckRectified %v", pair, s, err)
			}
			if err != nil && !strings.Contains(err.Error(), "not rectified") {
				t.Errorf("%s shifted %v px: %v", pair, s, err)
			}
		}
		t.Logf("%-30s measured %.2f", pair, got)
	}
}

// Bad inputs and unmatchable views: errors for sizes, no verdict for a
// flat pair or for two unrelated images.
func TestVerticalShiftInputs(t *testing.T) {
	flat := image.NewGray(image.Rect(0, 0, 64, 32))
	for _, c := range []struct {
		name        string
		left, right image.Image
		want        string
	}{
		{"nil", nil, flat, "nil"},
		{"sizes", flat, image.NewGray(image.Rect(0, 0, 64, 33)), "64x32 and the right 64x33"},
		{"short", image.NewGray(image.Rect(0, 0, 64, 8)), image.NewGray(image.Rect(0, 0, 64, 8)), "too small"},
	} {
		if _, err := VerticalShift(c.left, c.right, 0); err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want an error with %q", c.name, err, c.want)
		}
	}
	if r, err := VerticalShift(flat, flat, 0); err != nil || r.Found || !math.IsNaN(r.DY) {
		t.Errorf("flat pair: %+v, %v; want not found", r, err)
	}
	gl, _ := loadPair(t, rectifiedPairs[0])
	ml, _ := loadPair(t, "motorcycle/%s.png")
	// Two unrelated scenes of different sizes are a size error; crop the
	// Motorcycle view to the greenhouse size.
	crop := ml.(interface {
		SubImage(image.Rectangle) image.Image
	}).SubImage(image.Rect(0, 0, gl.Bounds().Dx(), gl.Bounds().Dy()))
	if r, err := VerticalShift(gl, crop, 0); err != nil || r.Found {
		t.Errorf("unrelated views: %+v, %v; want not found", r, err)
	}
	if err := CheckRectified(gl, crop, -1); err == nil {
		t.Error("negative tolerance accepted")
	}
}

// The JPEG path (*image.YCbCr, read from its Y plane) measures what the
// generic path measures on the same pixels: a synthetic pair encoded as
// JPEG (quality 95) with the right view shifted by 2 px.
func TestVerticalShiftJPEG(t *testing.T) {
	left, right := loadPair(t, rectifiedPairs[3])
	decode := func(img image.Image) image.Image {
		var buf bytes.Buffer
		if err := jpeg.Encode(&buf, img, &jpeg.Options{Quality: 95}); err != nil {
			t.Fatal(err)
		}
		out, err := jpeg.Decode(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if _, ok := out.(*image.YCbCr); !ok {
			t.Fatalf("JPEG decodes as %T", out)
		}
		return out
	}
	jl, jr := decode(left), decode(shiftRows(right, 2))
	fast, err := VerticalShift(jl, jr, 0)
	if err != nil {
		t.Fatal(err)
	}
	slow, err := VerticalShift(shiftRows(jl, 0), shiftRows(jr, 0), 0) // *image.RGBA64: the At path
	if err != nil {
		t.Fatal(err)
	}
	if !fast.Found || math.Abs(fast.DY-2) > 0.25 || math.Abs(fast.DY-slow.DY) > 0.05 {
		t.Errorf("JPEG: %+v, through At: %+v, want 2 px within 0.25 and the two within 0.05", fast, slow)
	}
}
