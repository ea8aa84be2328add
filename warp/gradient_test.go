package warp

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
)

// kinkMargin is how far, in pixels, every sample position u of a gradient
// check stays from an integer, where bilinear sampling has a kink; fdStep
// (in pixels of u) is the central-difference step, half of it, so both
// stencil points lie on the same linear piece and the central difference
// is exact up to rounding.
const (
	kinkMargin = 5e-3
	fdStep     = 2.5e-3
)

// randomCase draws a seeded batch whose disparities reach beyond both image
// edges, so Zero's fading taps, Clamp's held edges and fully outside samples
// all occur, with every u at least kinkMargin from an integer.
func randomCase(seed uint64, s Shape, dir Direction) (src, disp, gradDst []float32) {
	rng := rand.New(rand.NewPCG(seed, 0x5eed))
	src = make([]float32, s.N*s.C*s.H*s.W)
	gradDst = make([]float32, len(src))
	for i := range src {
		src[i] = rng.Float32()
		gradDst[i] = 2*rng.Float32() - 1
	}
	disp = make([]float32, s.N*s.H*s.W)
	scale := float32(dir) * float32(s.W)
	for i := range disp {
		x := i % s.W
		for {
			d := (rng.Float32()*1.4 - 0.3) // d·W from -0.3W to 1.1W
			u := float32(x) + scale*d      // as the kernel rounds it
			if math.Abs(float64(u)-math.Round(float64(u))) >= kinkMargin {
				disp[i] = d
				break
			}
		}
	}
	return src, disp, gradDst
}

// lossOf is L = Σ gradDst·Forward(src, disp), summed in float64 so that a
// perturbed pixel is the only source of rounding in a difference of L.
func lossOf(dst, src, disp, gradDst []float32, s Shape, dir Direction, b Border) float64 {
	Forward(dst, nil, src, disp, s, dir, b)
	var l float64
	for i, v := range dst {
		l += float64(gradDst[i]) * float64(v)
	}
	return l
}

// TestBackwardFiniteDifference checks Backward against central differences
// of the loss L = Σ gradDst·Forward (gonum v0.17.0 diff/fd, formula
// Central). Tolerances: L is linear in src, so the source check only sees
// float32 rounding of src±h (h = 1e-3, ulp(1)/h ≈ 1e-4 relative): 1e-3.
// The disparity step moves u by fdStep = 2.5e-3 px; float32 rounding of d
// and u (ulp(W) ≈ 1e-6 for W < 16) is below 1e-3 of it: 2e-3·(1 + |ref|).
func TestBackwardFiniteDifference(t *testing.T) {
	shapes := []Shape{
		{N: 2, C: 3, H: 2, W: 9},
		{N: 1, C: 1, H: 3, W: 5},
		{N: 3, C: 2, H: 1, W: 12},
	}
	seed := uint64(1)
	for _, s := range shapes {
		for _, dir := range []Direction{RebuildLeft, RebuildRight} {
			for _, b := range []Border{Zero, Clamp} {
				seed++
				name := fmt.Sprintf("%dx%dx%dx%d/%v/%v", s.N, s.C, s.H, s.W, dir, b)
				t.Run(name, func(t *testing.T) {
					src, disp, gradDst := randomCase(seed, s, dir)
					gradSrc := make([]float32, len(src))
					gradDisp := make([]float32, len(disp))
					Backward(gradSrc, gradDisp, gradDst, src, disp, s, dir, b)

					dst := make([]float32, len(src))
					src32 := make([]float32, len(src))
					wantSrc := fd.Gradient(nil, func(x []float64) float64 {
						for i, v := range x {
							src32[i] = float32(v)
						}
						return lossOf(dst, src32, disp, gradDst, s, dir, b)
					}, f64(src), &fd.Settings{Formula: fd.Central, Step: 1e-3})
					checkGrad(t, "source", gradSrc, wantSrc, 1e-3, 0)

					disp32 := make([]float32, len(disp))
					wantDisp := fd.Gradient(nil, func(x []float64) float64 {
						for i, v := range x {
							disp32[i] = float32(v)
						}
						return lossOf(dst, src, disp32, gradDst, s, dir, b)
					}, f64(disp), &fd.Settings{Formula: fd.Central, Step: fdStep / float64(s.W)})
					checkGrad(t, "disparity", gradDisp, wantDisp, 2e-3, 2e-3)

					// Each gradient alone equals the one computed together.
					gs := make([]float32, len(src))
					gd := make([]float32, len(disp))
					Backward(gs, nil, gradDst, src, disp, s, dir, b)
					Backward(nil, gd, gradDst, src, disp, s, dir, b)
					for i := range gs {
						if gs[i] != gradSrc[i] {
							t.Fatalf("source gradient alone differs at %d: %v vs %v", i, gs[i], gradSrc[i])
						}
					}
					for i := range gd {
						if gd[i] != gradDisp[i] {
							t.Fatalf("disparity gradient alone differs at %d: %v vs %v", i, gd[i], gradDisp[i])
						}
					}
				})
			}
		}
	}
}

func f64(a []float32) []float64 {
	out := make([]float64, len(a))
	for i, v := range a {
		out[i] = float64(v)
	}
	return out
}

func checkGrad(t *testing.T, what string, got []float32, want []float64, atol, rtol float64) {
	t.Helper()
	nonzero := 0
	for i, w := range want {
		if e := math.Abs(float64(got[i]) - w); e > atol+rtol*math.Abs(w) {
			t.Errorf("%s gradient[%d] = %v, central difference (gonum diff/fd) %v", what, i, got[i], w)
			return
		}
		if math.Abs(w) > 1e-2 {
			nonzero++
		}
	}
	// A check of zeros against zeros would prove nothing.
	if nonzero < len(want)/4 {
		t.Errorf("%s gradient: only %d of %d entries are not ~0", what, nonzero, len(want))
	}
}
