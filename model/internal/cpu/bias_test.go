package cpu

import (
	"fmt"
	"math"
	"testing"
)

func TestBiasAgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "bias.json") {
		n, ch, h, w := c.nchw()
		name := fmt.Sprintf("bias %v", c.Shape)
		y := make([]float32, len(c.X))
		gb := make([]float32, ch)
		AddBias(y, c.X, c.Bias, n, ch, h, w)
		BiasBackward(gb, c.Gy, n, ch, h, w)
		// Reference: PyTorch 1.13.1 (Debian python3-torch) x + bias.reshape(1, C, 1, 1)
		// and autograd. One float32 addition: exact agreement. The bias gradient
		// is a sum of up to 720 values; PyTorch sums in float32, we sum blocks in
		// float32 and blocks in float64, so allow a few ulps of the magnitudes summed.
		opsClose(t, name+" forward", y, c.Y, 0, 0)
		opsClose(t, name+" input gradient is the upstream gradient", c.Gx, c.Gy, 0, 0)
		opsClose(t, name+" bias gradient", gb, c.Gbias, 1e-5, 1e-5)

		inPlace := append([]float32(nil), c.X...)
		AddBias(inPlace, inPlace, c.Bias, n, ch, h, w)
		opsClose(t, name+" in place", inPlace, y, 0, 0)
	}
}

func TestBiasLarge(t *testing.T) {
	// Large enough to split over cores; the reference is the float64 sum.
	n, c, h, w := 3, 5, 70, 130
	x := opsRandom(n*c*h*w, 1, 21)
	bias := opsRandom(c, 1, 22)
	y := make([]float32, len(x))
	AddBias(y, x, bias, n, c, h, w)
	gb := make([]float32, c)
	BiasBackward(gb, x, n, c, h, w)
	for ch := 0; ch < c; ch++ {
		var sum, abs float64
		for i := 0; i < n; i++ {
			for k := 0; k < h*w; k++ {
				j := (i*c+ch)*h*w + k
				if y[j] != x[j]+bias[ch] {
					t.Fatalf("AddBias[%d] = %v, want %v", j, y[j], x[j]+bias[ch])
				}
				sum += float64(x[j])
				abs += math.Abs(float64(x[j]))
			}
		}
		// Error bound of blocked float32 summation (common practice): about
		// (block length / 4)·ε·Σ|x| for four partial sums; the blocks add in float64.
		if d := math.Abs(float64(gb[ch]) - sum); d > 64*0x1p-24*abs/100+1e-6 {
			t.Errorf("BiasBackward[%d] = %v, float64 sum %v (|diff| %.3g)", ch, gb[ch], sum, d)
		}
	}
}

func TestBiasFiniteDifferences(t *testing.T) {
	n, c, h, w := 2, 3, 2, 5
	x := opsRandom(n*c*h*w, 1, 23)
	bias := opsRandom(c, 1, 24)
	gy := opsRandom(len(x), 1, 25)
	gb := make([]float32, c)
	BiasBackward(gb, gy, n, c, h, w)
	y := make([]float32, len(x))
	opsCheckGradient(t, "bias", bias, gy, gb, func(y, b []float32) { AddBias(y, x, b, n, c, h, w) }, len(y), 1e-2, 1e-4)
}

func TestBiasNoAlloc(t *testing.T) {
	for _, s := range []struct{ n, c, h, w int }{{1, 2, 3, 4}, {1, 32, 64, 128}} {
		x := make([]float32, s.n*s.c*s.h*s.w)
		b := make([]float32, s.c)
		name := fmt.Sprintf("%+v", s)
		opsNoAlloc(t, "AddBias "+name, func() { AddBias(x, x, b, s.n, s.c, s.h, s.w) })
		opsNoAlloc(t, "BiasBackward "+name, func() { BiasBackward(b, x, s.n, s.c, s.h, s.w) })
	}
}

func TestBiasPanicsOnMisuse(t *testing.T) {
	x := make([]float32, 24)
	opsMustPanic(t, "short bias", func() { AddBias(x, x, make([]float32, 2), 1, 3, 2, 4) })
	opsMustPanic(t, "short src", func() { AddBias(x, x[:23], make([]float32, 3), 1, 3, 2, 4) })
	opsMustPanic(t, "long dbias", func() { BiasBackward(make([]float32, 4), x, 1, 3, 2, 4) })
	opsMustPanic(t, "negative n", func() { BiasBackward(make([]float32, 3), x, -1, 3, 2, 4) })
}

func BenchmarkBias(b *testing.B) {
	for _, s := range opsBenchSizes {
		x := make([]float32, s.c*s.h*s.w)
		bias := make([]float32, s.c)
		b.Run(fmt.Sprintf("AddInPlace/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				AddBias(x, x, bias, 1, s.c, s.h, s.w)
			}
			opsReportGBs(b, 8*len(x))
		})
		b.Run(fmt.Sprintf("Backward/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				BiasBackward(bias, x, 1, s.c, s.h, s.w)
			}
			opsReportGBs(b, 4*len(x))
		})
	}
}
