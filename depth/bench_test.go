package depth

import (
	"bytes"
	"fmt"
	"image"
	"io"
	"math/rand/v2"
	"testing"
)

var benchSizes = []image.Point{{370, 250}, {1280, 720}}

// benchMaps returns a disparity map of the given size with 5% invalid
// pixels, a rig at that size, and the matching depth.
func benchMaps(b *testing.B, size image.Point) (*Rig, *Disparity, *Depth) {
	b.Helper()
	rig, err := motorcycleRig().Scaled(size.X, size.Y)
	if err != nil {
		b.Fatal(err)
	}
	d, _ := NewDisparity(image.Rect(0, 0, size.X, size.Y))
	r := rand.New(rand.NewPCG(1, 1))
	for y := 0; y < size.Y; y++ {
		for x := 0; x < size.X; x++ {
			if r.Float64() > 0.05 {
				d.Set(x, y, float32(1+r.Float64()*0.1*float64(size.X)))
			}
		}
	}
	z, err := rig.DisparityToDepth(d)
	if err != nil {
		b.Fatal(err)
	}
	return rig, d, z
}

func benchOverSizes(b *testing.B, f func(b *testing.B, rig *Rig, d *Disparity, z *Depth)) {
	for _, s := range benchSizes {
		b.Run(fmt.Sprintf("%dx%d", s.X, s.Y), func(b *testing.B) {
			rig, d, z := benchMaps(b, s)
			b.ReportAllocs()
			b.SetBytes(int64(4 * s.X * s.Y))
			b.ResetTimer()
			f(b, rig, d, z)
		})
	}
}

func BenchmarkDisparityToDepth(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, rig *Rig, d *Disparity, _ *Depth) {
		for i := 0; i < b.N; i++ {
			if _, err := rig.DisparityToDepth(d); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkDepthErrors(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, _ *Rig, _ *Disparity, z *Depth) {
		opt := &DepthOptions{MedianScale: true, MaxDepth: 8}
		for i := 0; i < b.N; i++ {
			if _, err := DepthErrors(z, z, opt); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkColorDepth(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, _ *Rig, _ *Disparity, z *Depth) {
		for i := 0; i < b.N; i++ {
			if _, err := ColorDepth(z, nil); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkPFMRoundTrip(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, _ *Rig, d *Disparity, _ *Depth) {
		var buf bytes.Buffer
		w, h := d.Rect.Dx(), d.Rect.Dy()
		for i := 0; i < b.N; i++ {
			buf.Reset()
			if err := WritePFM(&buf, d.Pix, w, h, 1); err != nil {
				b.Fatal(err)
			}
			if _, _, _, _, err := ReadPFM(&buf); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkWritePNG16(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, _ *Rig, _ *Disparity, z *Depth) {
		for i := 0; i < b.N; i++ {
			if _, err := WritePNG16(io.Discard, z); err != nil {
				b.Fatal(err)
			}
		}
	})
}

func BenchmarkPointCloudPLY(b *testing.B) {
	benchOverSizes(b, func(b *testing.B, rig *Rig, _ *Disparity, z *Depth) {
		img := image.NewNRGBA(z.Rect)
		for i := 0; i < b.N; i++ {
			pc, err := PointCloudFromDepth(z, img, rig)
			if err != nil {
				b.Fatal(err)
			}
			if err := pc.WritePLY(io.Discard, PLYBinary); err != nil {
				b.Fatal(err)
			}
		}
	})
}

// BenchmarkVerticalShift times the rectification check (both views' row
// profiles and the correlation search) on RGBA and on JPEG-decoded
// (*image.YCbCr) pairs of random pixels at benchSizes.
func BenchmarkVerticalShift(b *testing.B) {
	for _, s := range benchSizes {
		rect := image.Rect(0, 0, s.X, s.Y)
		r := rand.New(rand.NewPCG(2, 2))
		l, rt := image.NewRGBA(rect), image.NewRGBA(rect)
		for i := range l.Pix {
			l.Pix[i], rt.Pix[i] = uint8(r.IntN(256)), uint8(r.IntN(256))
		}
		yl, yr := image.NewYCbCr(rect, image.YCbCrSubsampleRatio420), image.NewYCbCr(rect, image.YCbCrSubsampleRatio420)
		copy(yl.Y, l.Pix)
		copy(yr.Y, rt.Pix)
		for _, c := range []struct {
			name        string
			left, right image.Image
		}{{"RGBA", l, rt}, {"YCbCr", yl, yr}} {
			b.Run(fmt.Sprintf("%s/%dx%d", c.name, s.X, s.Y), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, err := VerticalShift(c.left, c.right, 0); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
