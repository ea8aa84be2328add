package cpu

import (
	"fmt"
	"math"
	"testing"
)

// blocksPaths runs f with the Go loops and, where the CPU has them, with
// the AVX2 loops for 2×2 blocks (nearest upsampling).
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

// upsamplePaths runs f with the Go loops and, where the CPU has them,
// with the SIMD loops (AVX2 or ASIMD).
func upsamplePaths(t *testing.T, f func(t *testing.T)) {
	saved := upsampleSIMD
	defer func() { upsampleSIMD = saved }()
	upsampleSIMD = false
	t.Run("go", f)
	if saved {
		upsampleSIMD = true
		t.Run("simd", f)
	}
}

func TestUpsample2xAgainstTorch(t *testing.T) {
	upsamplePaths(t, func(t *testing.T) { blocksPaths(t, testUpsample2xAgainstTorch) })
}

func testUpsample2xAgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "upsample.json") {
		n, ch, h, w := c.nchw()
		name := fmt.Sprintf("%s %v", c.Op, c.Shape)
		y := make([]float32, 4*n*ch*h*w)
		gx := make([]float32, n*ch*h*w)
		switch c.Op {
		case "interpolate_bilinear":
			UpsampleBilinear2x(y, c.X, n, ch, h, w)
			UpsampleBilinear2xBackward(gx, c.Gy, n, ch, h, w)
			// Reference: PyTorch 1.13.1 (Debian python3-torch) F.interpolate(scale_factor=2,
			// mode='bilinear', align_corners=False) and its autograd gradient. The
			// weights ¾, ¼ are exact; the tolerances cover float32 summation order.
			opsClose(t, name+" forward", y, c.Y, 1e-6, 1e-6)
			opsClose(t, name+" backward", gx, c.Gx, 1e-5, 1e-6)
		case "interpolate_nearest":
			UpsampleNearest2x(y, c.X, n, ch, h, w)
			UpsampleNearest2xBackward(gx, c.Gy, n, ch, h, w)
			// Reference: PyTorch 1.13.1 (Debian python3-torch) F.interpolate(scale_factor=2,
			// mode='nearest'). The forward copies values, so it must be exact.
			opsClose(t, name+" forward", y, c.Y, 0, 0)
			opsClose(t, name+" backward", gx, c.Gx, 1e-6, 1e-6)
		default:
			t.Fatalf("unknown op %q in upsample.json", c.Op)
		}
	}
}

// bilinearTap is PyTorch's source index rule for align_corners=False,
// written out in general (not specialised to a factor of 2) for the
// reference below: source coordinate (o+½)·(in/out) − ½, clamped below at 0,
// neighbours i0 = floor and i1 = min(i0+1, in−1), weight of i1 = fraction.
func bilinearTap(o, in int) (i0, i1 int, l1 float64) {
	src := (float64(o)+0.5)*float64(in)/float64(2*in) - 0.5
	if src < 0 {
		src = 0
	}
	i0 = int(math.Floor(src))
	i1 = min(i0+1, in-1)
	return i0, i1, src - float64(i0)
}

// naiveUpsampleBilinear2x is the direct four-tap formula in float64.
func naiveUpsampleBilinear2x(x []float32, n, c, h, w int) []float32 {
	y := make([]float32, 4*n*c*h*w)
	for p := 0; p < n*c; p++ {
		for oy := 0; oy < 2*h; oy++ {
			y0, y1, ly := bilinearTap(oy, h)
			for ox := 0; ox < 2*w; ox++ {
				x0, x1, lx := bilinearTap(ox, w)
				at := func(yy, xx int) float64 { return float64(x[(p*h+yy)*w+xx]) }
				v := (1-ly)*((1-lx)*at(y0, x0)+lx*at(y0, x1)) + ly*((1-lx)*at(y1, x0)+lx*at(y1, x1))
				y[(p*2*h+oy)*2*w+ox] = float32(v)
			}
		}
	}
	return y
}

// naiveUpsampleBilinear2xBackward scatters each upstream value to its four
// taps, in float64.
func naiveUpsampleBilinear2xBackward(g []float32, n, c, h, w int) []float32 {
	acc := make([]float64, n*c*h*w)
	for p := 0; p < n*c; p++ {
		for oy := 0; oy < 2*h; oy++ {
			y0, y1, ly := bilinearTap(oy, h)
			for ox := 0; ox < 2*w; ox++ {
				x0, x1, lx := bilinearTap(ox, w)
				v := float64(g[(p*2*h+oy)*2*w+ox])
				acc[(p*h+y0)*w+x0] += (1 - ly) * (1 - lx) * v
				acc[(p*h+y0)*w+x1] += (1 - ly) * lx * v
				acc[(p*h+y1)*w+x0] += ly * (1 - lx) * v
				acc[(p*h+y1)*w+x1] += ly * lx * v
			}
		}
	}
	out := make([]float32, len(acc))
	for i, v := range acc {
		out[i] = float32(v)
	}
	return out
}

// TestUpsampleBilinear2xLarge runs a tensor big enough to be split over
// cores and compares it with the direct formula.
func TestUpsampleBilinear2xLarge(t *testing.T) { upsamplePaths(t, testUpsampleBilinear2xLarge) }

func testUpsampleBilinear2xLarge(t *testing.T) {
	// Widths around the 8-column SIMD blocks, and decoder-sized planes.
	shapes := []struct{ n, c, h, w int }{{2, 5, 37, 61}, {1, 3, 64, 128}}
	for w := 1; w <= 27; w++ {
		shapes = append(shapes, struct{ n, c, h, w int }{1, 1, 3, w})
	}
	for _, s := range shapes {
		x := opsRandom(s.n*s.c*s.h*s.w, 1, 1)
		g := opsRandom(4*len(x), 1, 2)
		y := make([]float32, 4*len(x))
		gx := make([]float32, len(x))
		UpsampleBilinear2x(y, x, s.n, s.c, s.h, s.w)
		UpsampleBilinear2xBackward(gx, g, s.n, s.c, s.h, s.w)
		name := fmt.Sprintf("%+v", s)
		// Reference: PyTorch's align_corners=False index rule (see bilinearTap),
		// evaluated in float64.
		opsClose(t, name+" forward", y, naiveUpsampleBilinear2x(x, s.n, s.c, s.h, s.w), 1e-6, 1e-6)
		opsClose(t, name+" backward", gx, naiveUpsampleBilinear2xBackward(g, s.n, s.c, s.h, s.w), 1e-5, 1e-6)
	}
}

func TestUpsampleNearest2xLarge(t *testing.T) { blocksPaths(t, testUpsampleNearest2xLarge) }

func testUpsampleNearest2xLarge(t *testing.T) {
	n, c, h, w := 2, 5, 37, 61
	x := opsRandom(n*c*h*w, 1, 3)
	g := opsRandom(4*len(x), 1, 4)
	y := make([]float32, 4*len(x))
	gx := make([]float32, len(x))
	UpsampleNearest2x(y, x, n, c, h, w)
	UpsampleNearest2xBackward(gx, g, n, c, h, w)
	for p := 0; p < n*c; p++ {
		for oy := 0; oy < 2*h; oy++ {
			for ox := 0; ox < 2*w; ox++ {
				// Nearest with factor 2 (PyTorch's rule floor(o·in/out)): input (o/2).
				if got, want := y[(p*2*h+oy)*2*w+ox], x[(p*h+oy/2)*w+ox/2]; got != want {
					t.Fatalf("forward plane %d (%d, %d) = %v, want %v", p, oy, ox, got, want)
				}
			}
		}
		for iy := 0; iy < h; iy++ {
			for ix := 0; ix < w; ix++ {
				at := func(oy, ox int) float32 { return g[(p*2*h+oy)*2*w+ox] }
				// Summed in PyTorch's order (row by row), as the doc promises.
				want := ((at(2*iy, 2*ix) + at(2*iy, 2*ix+1)) + at(2*iy+1, 2*ix)) + at(2*iy+1, 2*ix+1)
				if got := gx[(p*h+iy)*w+ix]; got != want {
					t.Fatalf("backward plane %d (%d, %d) = %v, want %v", p, iy, ix, got, want)
				}
			}
		}
	}
}

func TestUpsample2xFiniteDifferences(t *testing.T) { upsamplePaths(t, testUpsample2xFiniteDifferences) }

func testUpsample2xFiniteDifferences(t *testing.T) {
	for _, s := range []struct{ n, c, h, w int }{{1, 1, 1, 1}, {1, 2, 3, 4}, {2, 1, 5, 2}, {1, 1, 2, 19}} {
		x := opsRandom(s.n*s.c*s.h*s.w, 1, 5)
		gy := opsRandom(4*len(x), 1, 6)
		grad := make([]float32, len(x))
		UpsampleBilinear2xBackward(grad, gy, s.n, s.c, s.h, s.w)
		opsCheckGradient(t, fmt.Sprintf("bilinear %+v", s), x, gy, grad, func(y, x []float32) {
			UpsampleBilinear2x(y, x, s.n, s.c, s.h, s.w)
		}, len(gy), 1e-2, 1e-4)
		UpsampleNearest2xBackward(grad, gy, s.n, s.c, s.h, s.w)
		opsCheckGradient(t, fmt.Sprintf("nearest %+v", s), x, gy, grad, func(y, x []float32) {
			UpsampleNearest2x(y, x, s.n, s.c, s.h, s.w)
		}, len(gy), 1e-2, 1e-4)
	}
}

func TestUpsample2xNoAlloc(t *testing.T) {
	for _, s := range []struct{ n, c, h, w int }{{1, 2, 3, 4}, {1, 32, 64, 128}} {
		x := make([]float32, s.n*s.c*s.h*s.w)
		y := make([]float32, 4*len(x))
		name := fmt.Sprintf("%+v", s)
		opsNoAlloc(t, "UpsampleBilinear2x "+name, func() { UpsampleBilinear2x(y, x, s.n, s.c, s.h, s.w) })
		opsNoAlloc(t, "UpsampleBilinear2xBackward "+name, func() { UpsampleBilinear2xBackward(x, y, s.n, s.c, s.h, s.w) })
		opsNoAlloc(t, "UpsampleNearest2x "+name, func() { UpsampleNearest2x(y, x, s.n, s.c, s.h, s.w) })
		opsNoAlloc(t, "UpsampleNearest2xBackward "+name, func() { UpsampleNearest2xBackward(x, y, s.n, s.c, s.h, s.w) })
	}
}

func TestUpsample2xNonFinite(t *testing.T) {
	// IEEE arithmetic (common practice): a NaN spreads to the outputs that
	// read it and no further; nothing panics.
	x := []float32{1, float32(math.NaN()), 3, 4}
	y := make([]float32, 16)
	UpsampleBilinear2x(y, x, 1, 1, 1, 4)
	if !math.IsNaN(float64(y[2])) || math.IsNaN(float64(y[0])) || math.IsNaN(float64(y[7])) {
		t.Errorf("NaN at input 1 gave row %v", y[:8])
	}
}

func TestUpsample2xPanicsOnMisuse(t *testing.T) {
	x := make([]float32, 6)
	opsMustPanic(t, "short dst", func() { UpsampleBilinear2x(make([]float32, 23), x, 1, 1, 2, 3) })
	opsMustPanic(t, "long src", func() { UpsampleNearest2x(make([]float32, 24), make([]float32, 7), 1, 1, 2, 3) })
	opsMustPanic(t, "zero width", func() { UpsampleBilinear2xBackward(nil, nil, 1, 1, 2, 0) })
	opsMustPanic(t, "short ddst", func() { UpsampleNearest2xBackward(x, make([]float32, 20), 1, 1, 2, 3) })
}

func benchmarkUpsample(b *testing.B, c, h, w int, backward, nearest bool) {
	x := make([]float32, c*h*w)
	y := make([]float32, 4*len(x))
	b.ReportAllocs()
	for b.Loop() {
		switch {
		case !backward && !nearest:
			UpsampleBilinear2x(y, x, 1, c, h, w)
		case backward && !nearest:
			UpsampleBilinear2xBackward(x, y, 1, c, h, w)
		case !backward:
			UpsampleNearest2x(y, x, 1, c, h, w)
		default:
			UpsampleNearest2xBackward(x, y, 1, c, h, w)
		}
	}
	opsReportGBs(b, 4*5*len(x))
}

func BenchmarkUpsample2x(b *testing.B) {
	for _, s := range opsBenchSizes {
		for _, k := range []struct {
			name              string
			backward, nearest bool
		}{{"Bilinear", false, false}, {"BilinearBackward", true, false}, {"Nearest", false, true}, {"NearestBackward", true, true}} {
			b.Run(fmt.Sprintf("%s/%dx%dx%d", k.name, s.c, s.h, s.w), func(b *testing.B) {
				benchmarkUpsample(b, s.c, s.h, s.w, k.backward, k.nearest)
			})
		}
	}
}
