package cpu

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

// benchConvShapes are the 3×3 layers the targets are stated for:
// (N, Cin, H, W → Cout), stride 1, zero padding 1.
var benchConvShapes = [][5]int{
	{1, 3, 128, 256, 32},
	{1, 32, 64, 128, 64},
	{1, 64, 32, 64, 128},
	{4, 32, 64, 128, 64},
}

func benchmarkConv(b *testing.B, s [5]int, backward bool) {
	benchmarkConvStride(b, s, 1, backward)
}

// BenchmarkConv3x3WeightGrad times Backward with only the weight and bias
// gradients (as for a network's first layer); it counts the forward FLOPs.
func BenchmarkConv3x3WeightGrad(b *testing.B) {
	for _, s := range benchConvShapes {
		b.Run(fmt.Sprintf("%dx%dx%dx%d-%d", s[0], s[1], s[2], s[3], s[4]), func(b *testing.B) {
			n, cin, h, w, cout := s[0], s[1], s[2], s[3], s[4]
			c, err := NewConv2D(ConvParams{InC: cin, OutC: cout, Kernel: 3, Pad: 1}, n, h, w)
			if err != nil {
				b.Fatal(err)
			}
			rng := rand.New(rand.NewPCG(1, 1))
			x := randSlice(rng, n*cin*h*w)
			dy := randSlice(rng, n*cout*h*w)
			dw, db := make([]float32, c.WeightLen()), make([]float32, cout)
			c.Backward(nil, dw, db, x, nil, dy)
			b.ReportAllocs()
			b.ResetTimer()
			cpu0 := processCPUSeconds()
			for range b.N {
				c.Backward(nil, dw, db, x, nil, dy)
			}
			reportFLOPs(b, c.FLOPs()*float64(b.N), cpu0)
		})
	}
}

func benchmarkConvStride(b *testing.B, s [5]int, stride int, backward bool) {
	n, cin, h, w, cout := s[0], s[1], s[2], s[3], s[4]
	c, err := NewConv2D(ConvParams{InC: cin, OutC: cout, Kernel: 3, Stride: stride, Pad: 1}, n, h, w)
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	x := randSlice(rng, n*cin*h*w)
	wt := randSlice(rng, c.WeightLen())
	bias := randSlice(rng, cout)
	_, _, ho, wo := c.OutShape()
	y := make([]float32, n*cout*ho*wo)
	dy := randSlice(rng, len(y))
	dx, dw, db := make([]float32, len(x)), make([]float32, len(wt)), make([]float32, cout)
	flops := c.FLOPs()
	step := func() { c.Forward(y, x, wt, bias) }
	if backward {
		flops *= 3
		step = func() {
			c.Forward(y, x, wt, bias)
			c.Backward(dx, dw, db, x, wt, dy)
		}
	}
	step()
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := processCPUSeconds()
	for range b.N {
		step()
	}
	reportFLOPs(b, flops*float64(b.N), cpu0)
}

// reportFLOPs reports GFLOP/s over wall-clock time and, where the process
// CPU time is known, GFLOP per CPU-second (per core busy).
func reportFLOPs(b *testing.B, total float64, cpu0 float64) {
	b.ReportMetric(total/b.Elapsed().Seconds()/1e9, "GFLOP/s")
	if cpu := processCPUSeconds() - cpu0; cpu > 0 && cpu0 > 0 {
		b.ReportMetric(total/cpu/1e9, "GFLOP/cpu-s")
	}
}

func BenchmarkConv3x3Forward(b *testing.B) {
	for _, s := range benchConvShapes {
		b.Run(fmt.Sprintf("%dx%dx%dx%d-%d", s[0], s[1], s[2], s[3], s[4]), func(b *testing.B) { benchmarkConv(b, s, false) })
	}
}

// BenchmarkConv3x3ForwardBackward times Forward followed by Backward with
// all three gradients (dx, dweight, dbias); it counts 3× the forward FLOPs.
func BenchmarkConv3x3ForwardBackward(b *testing.B) {
	for _, s := range benchConvShapes {
		b.Run(fmt.Sprintf("%dx%dx%dx%d-%d", s[0], s[1], s[2], s[3], s[4]), func(b *testing.B) { benchmarkConv(b, s, true) })
	}
}

// BenchmarkConv3x3Stride2 times the encoder's down-sampling layers
// (stride 2, zero padding 1); the input gradient goes through im2col.
func BenchmarkConv3x3Stride2(b *testing.B) {
	for _, s := range benchConvShapes[1:3] {
		name := fmt.Sprintf("%dx%dx%dx%d-%d", s[0], s[1], s[2], s[3], s[4])
		b.Run("Forward/"+name, func(b *testing.B) { benchmarkConvStride(b, s, 2, false) })
		b.Run("ForwardBackward/"+name, func(b *testing.B) { benchmarkConvStride(b, s, 2, true) })
	}
}

func benchmarkSgemm(b *testing.B, m, n, k int) {
	rng := rand.New(rand.NewPCG(2, 2))
	a, bb, c := randSlice(rng, m*k), randSlice(rng, k*n), make([]float32, m*n)
	Sgemm(false, false, m, n, k, a, k, bb, n, c, n, false)
	b.ReportAllocs()
	b.ResetTimer()
	cpu0 := processCPUSeconds()
	for range b.N {
		Sgemm(false, false, m, n, k, a, k, bb, n, c, n, false)
	}
	reportFLOPs(b, 2*float64(m)*float64(n)*float64(k)*float64(b.N), cpu0)
}

func BenchmarkSgemm(b *testing.B) {
	for _, s := range []int{256, 1024} {
		b.Run(fmt.Sprint(s), func(b *testing.B) { benchmarkSgemm(b, s, s, s) })
	}
}
