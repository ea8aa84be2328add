package loss_test

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/planar"
)

// A user testing a loss variant of their own: a Charbonnier penalty
// mean √((x−t)² + ε²) in place of L1, with its hand-derived gradient
// (x−t)/√((x−t)² + ε²)/n, checked against central differences.
func ExampleCheckGradient() {
	target := []float32{0.2, 0.4, 0.6, 0.8, 0.1, 0.9}
	x := []float32{0.25, 0.3, 0.65, 0.5, 0.3, 0.7}
	const eps = 0.01
	value := func(x []float32) float64 {
		var sum float64
		for i := range x {
			d := float64(x[i] - target[i])
			sum += math.Sqrt(d*d + eps*eps)
		}
		return sum / float64(len(x))
	}
	grad := make([]float32, len(x))
	for i := range x {
		d := float64(x[i] - target[i])
		grad[i] = float32(d / math.Sqrt(d*d+eps*eps) / float64(len(x)))
	}
	res, err := loss.CheckGradient(value, x, grad, nil)
	fmt.Println("checked:", res.Checked, "error:", err)

	// A wrong gradient (the factor 1/n forgotten) is caught.
	for i := range grad {
		grad[i] *= float32(len(x))
	}
	_, err = loss.CheckGradient(value, x, grad, nil)
	fmt.Println("wrong gradient caught:", err != nil)
	// Output:
	// checked: 6 error: <nil>
	// wrong gradient caught: true
}

// Evaluate on one scale: a textured pair whose right view is the left
// shifted by exactly 2 pixels, with the matching disparity 2/W in both
// views. The rebuilt views equal the originals wherever they are valid and
// the disparities are constant and consistent, so the L1-only objective is
// 0. With SSIM (the default α = 0.85) the appearance is not quite 0: the
// 3×3 windows in the first valid column of the rebuilt left view still see
// the unfilled column beside it.
func ExampleEvalObjective() {
	const h, w = 4, 16
	left := planar.New(1, 3, h, w)
	right := planar.New(1, 3, h, w)
	for c := 0; c < 3; c++ {
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				v := float32(0.5 + 0.4*math.Sin(float64(x*x+3*y+c)))
				left.Set(0, c, y, x, v)
				if x-2 >= 0 {
					right.Set(0, c, y, x-2, v) // a point at column x appears at x−2
				}
			}
		}
	}
	dl := planar.New(1, 1, h, w)
	dr := planar.New(1, 1, h, w)
	for i := range dl.Pix {
		dl.Pix[i], dr.Pix[i] = 2.0/w, 2.0/w
	}
	scales := []loss.ScaleImages{{Left: left, Right: right, DispL: dl, DispR: dr}}
	l1 := loss.DefaultObjectiveOptions()
	l1.Alpha = loss.TermOff
	for _, opts := range []*loss.ObjectiveOptions{&l1, nil} {
		terms, grads, err := loss.EvalObjective(scales, opts)
		if err != nil {
			fmt.Println(err)
			return
		}
		fmt.Printf("appearance %.4f, smoothness %.4f, consistency %.4f, gradients for %d scale(s)\n",
			terms.Appearance, terms.Smoothness, terms.Consistency, len(grads))
	}
	// Output:
	// appearance 0.0000, smoothness 0.0000, consistency 0.0000, gradients for 1 scale(s)
	// appearance 0.0149, smoothness 0.0000, consistency 0.0000, gradients for 1 scale(s)
}
