package warp

import (
	"math/rand/v2"
	"testing"
)

// Which kernels a benchmark runs.
const (
	runForward = 1 << iota
	runBackward
)

// benchmarkWarp times Forward (with the mask) and/or Backward (both
// gradients) over a 1×c×h×w batch with disparities up to 30% of the width
// (a common upper bound for the disparity a stereo network predicts, common
// practice).
func benchmarkWarp(b *testing.B, run, c, h, w int, dir Direction, border Border) {
	s := Shape{N: 1, C: c, H: h, W: w}
	rng := rand.New(rand.NewPCG(1, 2))
	src := make([]float32, c*h*w)
	gradDst := make([]float32, c*h*w)
	for i := range src {
		src[i] = rng.Float32()
		gradDst[i] = rng.Float32() - 0.5
	}
	disp := make([]float32, h*w)
	for i := range disp {
		disp[i] = 0.3 * rng.Float32()
	}
	dst := make([]float32, len(src))
	mask := make([]float32, len(disp))
	gradSrc := make([]float32, len(src))
	gradDisp := make([]float32, len(disp))
	b.ReportAllocs()
	b.SetBytes(int64(4 * (len(src) + len(disp))))
	b.ResetTimer()
	for b.Loop() {
		if run&runForward != 0 {
			Forward(dst, mask, src, disp, s, dir, border)
		}
		if run&runBackward != 0 {
			Backward(gradSrc, gradDisp, gradDst, src, disp, s, dir, border)
		}
	}
}

const both = runForward | runBackward

// Target (one core, -cpu 1): forward+backward at most 1 ms at 3×128×256.
func BenchmarkForwardBackward3x128x256(b *testing.B) {
	benchmarkWarp(b, both, 3, 128, 256, RebuildLeft, Zero)
}

func BenchmarkForwardBackward3x192x640(b *testing.B) {
	benchmarkWarp(b, both, 3, 192, 640, RebuildLeft, Zero)
}

func BenchmarkForwardBackward3x128x256Clamp(b *testing.B) {
	benchmarkWarp(b, both, 3, 128, 256, RebuildRight, Clamp)
}

func BenchmarkForward3x128x256(b *testing.B) {
	benchmarkWarp(b, runForward, 3, 128, 256, RebuildLeft, Zero)
}

func BenchmarkBackward3x128x256(b *testing.B) {
	benchmarkWarp(b, runBackward, 3, 128, 256, RebuildLeft, Zero)
}
