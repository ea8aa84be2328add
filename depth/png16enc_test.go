package depth

import (
	"bytes"
	"errors"
	"image"
	"image/color"
	"image/png"
	"math/rand/v2"
	"testing"
)

// TestEncodeGray16 decodes encodeGray16's output with image/png and compares
// every pixel, on random, smooth and constant images, odd sizes, bounds away
// from the origin, and an image large enough to span several IDAT chunks.
func TestEncodeGray16(t *testing.T) {
	r := rand.New(rand.NewPCG(3, 4))
	sizes := []image.Rectangle{image.Rect(0, 0, 1, 1), image.Rect(5, -3, 12, 8), image.Rect(0, 0, 300, 200)}
	for _, b := range sizes {
		for kind := 0; kind < 3; kind++ {
			img := image.NewGray16(b)
			for y := b.Min.Y; y < b.Max.Y; y++ {
				for x := b.Min.X; x < b.Max.X; x++ {
					var v uint16
					switch kind {
					case 0:
						v = uint16(r.IntN(65536))
					case 1:
						v = uint16(1000 + 37*(x-b.Min.X) + 101*(y-b.Min.Y))
					case 2:
						v = 4242
					}
					img.SetGray16(x, y, color.Gray16{Y: v})
				}
			}
			var buf bytes.Buffer
			if err := encodeGray16(&buf, img, nil); err != nil {
				t.Fatal(err)
			}
			dec, err := png.Decode(&buf)
			if err != nil {
				t.Fatalf("%v kind %d: image/png cannot decode: %v", b, kind, err)
			}
			g, ok := dec.(*image.Gray16)
			if !ok || g.Rect.Dx() != b.Dx() || g.Rect.Dy() != b.Dy() {
				t.Fatalf("%v kind %d: decoded %T %v", b, kind, dec, dec.Bounds())
			}
			for y := 0; y < b.Dy(); y++ {
				for x := 0; x < b.Dx(); x++ {
					if got, want := g.Gray16At(x, y), img.Gray16At(b.Min.X+x, b.Min.Y+y); got != want {
						t.Fatalf("%v kind %d (%d, %d): %v, want %v", b, kind, x, y, got, want)
					}
				}
			}
		}
	}
}

// TestFilterRow undoes each of the five PNG filters as a decoder does (PNG
// specification, section 9) and checks that every candidate row restores
// the original.
func TestFilterRow(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 9))
	const n = 14
	cur, prev := make([]byte, n), make([]byte, n)
	for i := range cur {
		cur[i], prev[i] = byte(r.IntN(256)), byte(r.IntN(256))
	}
	var cand [5][]byte
	for i := range cand {
		cand[i] = make([]byte, 1+n)
	}
	filterRow(&cand, cur, prev)
	for f := range cand {
		out := make([]byte, n)
		for i := range out {
			var a, c byte
			if i >= 2 {
				a, c = out[i-2], prev[i-2]
			}
			b := prev[i]
			var pred byte
			switch f {
			case 1:
				pred = a
			case 2:
				pred = b
			case 3:
				pred = byte((int(a) + int(b)) / 2)
			case 4:
				pred = paeth(a, b, c)
			}
			out[i] = cand[f][1+i] + pred
		}
		if !bytes.Equal(out, cur) {
			t.Errorf("filter %d does not invert", f)
		}
	}
}

type failWriter struct{}

func (failWriter) Write([]byte) (int, error) { return 0, errors.New("disk full") }

func TestWritePNG16WriteError(t *testing.T) {
	if _, err := WritePNG16(failWriter{}, depthRow(1, 2, 3)); err == nil {
		t.Error("a failing writer: no error")
	}
}
