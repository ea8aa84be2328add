package loss

import (
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/warp"
)

// benchScales builds levels scales of a 1×c×h×w pair, each halving the
// previous one, with random images and disparities.
func benchScales(c, h, w, levels int) ([]Scale, []DispGrad) {
	rng := rand.New(rand.NewPCG(99, 100))
	var scales []Scale
	var grads []DispGrad
	for l := 0; l < levels; l++ {
		s := Shape{N: 1, C: c, H: h >> l, W: w >> l}
		n, np := c*s.H*s.W, s.H*s.W
		scales = append(scales, Scale{
			Left: uniform(rng, n, 0, 1), Right: uniform(rng, n, 0, 1),
			DispL: uniform(rng, np, 0.01, 0.2), DispR: uniform(rng, np, 0.01, 0.2),
			Shape: s,
		})
		grads = append(grads, DispGrad{DispL: make([]float32, np), DispR: make([]float32, np)})
	}
	return scales, grads
}

func benchmarkObjective(b *testing.B, c, h, w, levels int) {
	scales, grads := benchScales(c, h, w, levels)
	var o Objective
	o.Eval(nil, grads, scales)
	b.ReportAllocs()
	b.ResetTimer()
	cpu := processCPU()
	for range b.N {
		o.Eval(nil, grads, scales)
	}
	reportCPU(b, cpu)
}

// reportCPU adds the process CPU time per operation since cpu0, which on
// a shared machine is closer to the quiet-machine time than ns/op.
func reportCPU(b *testing.B, cpu0 int64) {
	if cpu := processCPU(); cpu > 0 {
		b.ReportMetric(float64(cpu-cpu0)/float64(b.N), "cpu-ns/op")
	}
}

func BenchmarkObjective_3x128x256(b *testing.B)         { benchmarkObjective(b, 3, 128, 256, 1) }
func BenchmarkObjective_3x128x256_4scales(b *testing.B) { benchmarkObjective(b, 3, 128, 256, 4) }
func BenchmarkObjective_3x192x640(b *testing.B)         { benchmarkObjective(b, 3, 192, 640, 1) }
func BenchmarkObjective_3x192x640_4scales(b *testing.B) { benchmarkObjective(b, 3, 192, 640, 4) }

// benchmarkTerm times one term, value and gradient, on one view.
func benchmarkTerm(b *testing.B, term string, c, h, w int) {
	scales, grads := benchScales(c, h, w, 1)
	sc, g := scales[0], grads[0]
	s := sc.Shape
	n := c * h * w
	gimg := make([]float32, n)
	out := make([]float32, n)
	var ssim SSIMKernel
	var app AppearanceKernel
	var smo SmoothnessKernel
	var con ConsistencyKernel
	run := func() {
		switch term {
		case "ssim":
			ssim.Forward(out, sc.Left, sc.Right, s)
			ssim.Backward(nil, gimg, sc.Left, sc.Left, sc.Right, s)
		case "appearance":
			app.Eval(nil, gimg, sc.Left, sc.Right, nil, s, DefaultAlpha)
		case "smoothness":
			smo.Eval(g.DispL, sc.DispL, sc.Left, s, true)
		case "consistency":
			con.Eval(g.DispL, g.DispR, sc.DispL, sc.DispR, Shape{N: 1, C: 1, H: h, W: w}, warp.Zero)
		case "warp":
			warp.Forward(out, nil, sc.Right, sc.DispL, s, warp.RebuildLeft, warp.Zero)
			warp.Backward(nil, g.DispL, gimg, sc.Right, sc.DispL, s, warp.RebuildLeft, warp.Zero)
		}
	}
	run()
	b.ReportAllocs()
	b.ResetTimer()
	cpu := processCPU()
	for range b.N {
		run()
	}
	reportCPU(b, cpu)
}

func BenchmarkSSIM_3x128x256(b *testing.B)        { benchmarkTerm(b, "ssim", 3, 128, 256) }
func BenchmarkAppearance_3x128x256(b *testing.B)  { benchmarkTerm(b, "appearance", 3, 128, 256) }
func BenchmarkSmoothness_3x128x256(b *testing.B)  { benchmarkTerm(b, "smoothness", 3, 128, 256) }
func BenchmarkConsistency_3x128x256(b *testing.B) { benchmarkTerm(b, "consistency", 3, 128, 256) }
func BenchmarkWarp_3x128x256(b *testing.B)        { benchmarkTerm(b, "warp", 3, 128, 256) }
func BenchmarkSSIM_3x192x640(b *testing.B)        { benchmarkTerm(b, "ssim", 3, 192, 640) }
func BenchmarkAppearance_3x192x640(b *testing.B)  { benchmarkTerm(b, "appearance", 3, 192, 640) }
func BenchmarkSmoothness_3x192x640(b *testing.B)  { benchmarkTerm(b, "smoothness", 3, 192, 640) }
func BenchmarkConsistency_3x192x640(b *testing.B) { benchmarkTerm(b, "consistency", 3, 192, 640) }
