package cpu

import (
	"fmt"
	"testing"
)

// blocksPaths runs f with the Go loops and, where the CPU has them, with
// the AVX2 loops for 2×2 blocks (average pooling, nearest upsampling).
func blocksPaths(t *testing.T, f func(t *testing.T)) {
	saved := blocksAVX2
	defer func() { blocksAVX2 = saved }()
	blocksAVX2 = false
	t.Run("go", f)
	if saved {
		blocksAVX2 = true
		t.Run("avx2", f)
	}
}

func TestAvgPool2x2AgainstTorch(t *testing.T) { blocksPaths(t, testAvgPool2x2AgainstTorch) }

func testAvgPool2x2AgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "pool.json") {
		n, ch, h, w := c.nchw()
		name := fmt.Sprintf("avg pool %v", c.Shape)
		y := make([]float32, n*ch*(h/2)*(w/2))
		gx := make([]float32, len(c.X))
		for i := range gx {
			gx[i] = 99 // must be overwritten, dropped rows and columns included
		}
		AvgPool2x2(y, c.X, n, ch, h, w)
		AvgPool2x2Backward(gx, c.Gy, n, ch, h, w)
		// Reference: PyTorch 1.13.1 (Debian python3-torch) F.avg_pool2d(kernel_size=2,
		// stride=2), autograd. Same summation order and an exact division by 4:
		// the forward agrees to the last bit; the backward is exact scaling.
		opsClose(t, name+" forward", y, c.Y, 0, 0)
		opsClose(t, name+" backward", gx, c.Gx, 0, 0)
	}
}

func TestAvgPool2x2Large(t *testing.T) { blocksPaths(t, testAvgPool2x2Large) }

func testAvgPool2x2Large(t *testing.T) {
	n, c, h, w := 2, 3, 131, 277 // odd sizes, split over cores, a SIMD tail
	x := opsRandom(n*c*h*w, 1, 31)
	oh, ow := h/2, w/2
	g := opsRandom(n*c*oh*ow, 1, 32)
	y := make([]float32, len(g))
	gx := make([]float32, len(x))
	for i := range gx {
		gx[i] = 99
	}
	AvgPool2x2(y, x, n, c, h, w)
	AvgPool2x2Backward(gx, g, n, c, h, w)
	for p := 0; p < n*c; p++ {
		for i := 0; i < oh; i++ {
			for j := 0; j < ow; j++ {
				at := func(yy, xx int) float32 { return x[(p*h+yy)*w+xx] }
				// The mean of the block (definition; common practice).
				want := (at(2*i, 2*j) + at(2*i, 2*j+1) + at(2*i+1, 2*j) + at(2*i+1, 2*j+1)) / 4
				if got := y[(p*oh+i)*ow+j]; got != want {
					t.Fatalf("forward plane %d (%d, %d) = %v, want %v", p, i, j, got, want)
				}
			}
		}
		for yy := 0; yy < h; yy++ {
			for xx := 0; xx < w; xx++ {
				var want float32
				if yy/2 < oh && xx/2 < ow {
					want = g[(p*oh+yy/2)*ow+xx/2] / 4
				}
				if got := gx[(p*h+yy)*w+xx]; got != want {
					t.Fatalf("backward plane %d (%d, %d) = %v, want %v", p, yy, xx, got, want)
				}
			}
		}
	}
}

func TestAvgPool2x2Degenerate(t *testing.T) {
	// A 1-pixel-high input has an empty output; the backward still
	// overwrites the input gradient with zeros.
	gx := []float32{5, 5, 5, 5}
	AvgPool2x2(nil, make([]float32, 4), 1, 1, 1, 4)
	AvgPool2x2Backward(gx, nil, 1, 1, 1, 4)
	for i, v := range gx {
		if v != 0 {
			t.Fatalf("gx[%d] = %v, want 0", i, v)
		}
	}
}

func TestAvgPool2x2FiniteDifferences(t *testing.T) { blocksPaths(t, testAvgPool2x2FiniteDifferences) }

func testAvgPool2x2FiniteDifferences(t *testing.T) {
	n, c, h, w := 2, 1, 5, 37
	x := opsRandom(n*c*h*w, 1, 33)
	gy := opsRandom(n*c*(h/2)*(w/2), 1, 34)
	gx := make([]float32, len(x))
	AvgPool2x2Backward(gx, gy, n, c, h, w)
	opsCheckGradient(t, "avg pool", x, gy, gx, func(y, x []float32) { AvgPool2x2(y, x, n, c, h, w) }, len(gy), 1e-2, 1e-5)
}

func TestAvgPool2x2NoAlloc(t *testing.T) {
	for _, s := range []struct{ n, c, h, w int }{{1, 2, 3, 4}, {1, 3, 256, 512}} {
		x := make([]float32, s.n*s.c*s.h*s.w)
		y := make([]float32, s.n*s.c*(s.h/2)*(s.w/2))
		name := fmt.Sprintf("%+v", s)
		opsNoAlloc(t, "AvgPool2x2 "+name, func() { AvgPool2x2(y, x, s.n, s.c, s.h, s.w) })
		opsNoAlloc(t, "AvgPool2x2Backward "+name, func() { AvgPool2x2Backward(x, y, s.n, s.c, s.h, s.w) })
	}
}

func TestAvgPool2x2PanicsOnMisuse(t *testing.T) {
	opsMustPanic(t, "dst for unrounded size", func() { AvgPool2x2(make([]float32, 6), make([]float32, 15), 1, 1, 3, 5) })
	opsMustPanic(t, "short src", func() { AvgPool2x2(make([]float32, 2), make([]float32, 14), 1, 1, 3, 5) })
	opsMustPanic(t, "zero channels", func() { AvgPool2x2Backward(nil, nil, 1, 0, 2, 2) })
}

func BenchmarkAvgPool2x2(b *testing.B) {
	// The image pyramid (3 channels) and decoder-sized activations.
	sizes := append([]struct{ c, h, w int }{{3, 256, 512}}, opsBenchSizes...)
	for _, s := range sizes {
		x := make([]float32, s.c*s.h*s.w)
		y := make([]float32, len(x)/4)
		b.Run(fmt.Sprintf("Forward/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				AvgPool2x2(y, x, 1, s.c, s.h, s.w)
			}
			opsReportGBs(b, 5*len(x))
		})
		b.Run(fmt.Sprintf("Backward/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				AvgPool2x2Backward(x, y, 1, s.c, s.h, s.w)
			}
			opsReportGBs(b, 5*len(x))
		})
	}
}
