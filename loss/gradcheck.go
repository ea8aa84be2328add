package loss

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/diff/fd"
)

// GradCheckOptions tunes CheckGradient. The zero value is ready to use.
type GradCheckOptions struct {
	// Step is the central-difference step. If Step is 0 it defaults to
	// 2⁻¹⁰ ≈ 9.8e-4, a power of two, so that x ± Step is exact in float32
	// for the values of images and disparities.
	Step float64
	// AbsTol and RelTol bound the accepted difference between the analytic
	// gradient a and the numeric one g at each checked element:
	// |a − g| ≤ AbsTol + RelTol·max(|a|, |g|). If AbsTol is 0 it defaults
	// to 1e-4; if RelTol is 0 it defaults to 1e-2.
	AbsTol, RelTol float64
	// Indices lists the elements of x to check; nil checks all of them.
	Indices []int
}

// GradCheckResult reports a gradient check.
type GradCheckResult struct {
	// Checked is the number of elements compared.
	Checked int
	// MaxAbsErr is the largest |a − g| over the checked elements.
	MaxAbsErr float64
	// Worst is the element whose difference used the largest share of its
	// tolerance, with its analytic and numeric gradients.
	Worst             int
	Analytic, Numeric float64
}

// CheckGradient compares grad, an analytic gradient of f at x, with central
// differences of f computed by gonum's diff/fd, and reports the largest
// discrepancy. f is called with a perturbed copy of x, which it must not
// keep; it may be a closure over a kernel and its other inputs, which lets a
// user test a loss variant of their own. A nil opts means the defaults.
//
// CheckGradient returns an error whose text starts with "loss: " if the
// lengths of x and grad differ, an index is out of range, a numeric
// gradient is not finite, or an element exceeds its tolerance (the result
// is filled in all the same).
func CheckGradient(f func(x []float32) float64, x, grad []float32, opts *GradCheckOptions) (GradCheckResult, error) {
	var o GradCheckOptions
	if opts != nil {
		o = *opts
	}
	if o.Step == 0 {
		o.Step = 1.0 / 1024
	}
	if o.AbsTol == 0 {
		o.AbsTol = 1e-4
	}
	if o.RelTol == 0 {
		o.RelTol = 1e-2
	}
	var res GradCheckResult
	if len(x) != len(grad) {
		return res, fmt.Errorf("loss: gradient check: x has %d values, gradient %d", len(x), len(grad))
	}
	idx := o.Indices
	if idx == nil {
		idx = make([]int, len(x))
		for i := range idx {
			idx[i] = i
		}
	}
	for _, i := range idx {
		if i < 0 || i >= len(x) {
			return res, fmt.Errorf("loss: gradient check: index %d out of range [0, %d)", i, len(x))
		}
	}
	work := append([]float32(nil), x...)
	z := make([]float64, len(idx))
	for k, i := range idx {
		z[k] = float64(x[i])
	}
	value := func(z []float64) float64 {
		for k, i := range idx {
			work[i] = float32(z[k])
		}
		return f(work)
	}
	num := fd.Gradient(nil, value, z, &fd.Settings{Formula: fd.Central, Step: o.Step})
	res.Checked = len(idx)
	worstShare := -1.0
	var firstErr error
	for k, i := range idx {
		a, g := float64(grad[i]), num[k]
		if math.IsNaN(g) || math.IsInf(g, 0) {
			if firstErr == nil {
				firstErr = fmt.Errorf("loss: gradient check: numeric gradient at element %d is %v", i, g)
			}
			continue
		}
		d := math.Abs(a - g)
		res.MaxAbsErr = math.Max(res.MaxAbsErr, d)
		tol := o.AbsTol + o.RelTol*math.Max(math.Abs(a), math.Abs(g))
		share := d / tol
		if math.IsNaN(d) {
			share = math.Inf(1)
		}
		if share > worstShare {
			worstShare = share
			res.Worst, res.Analytic, res.Numeric = i, a, g
		}
		if share > 1 && firstErr == nil {
			firstErr = fmt.Errorf("loss: gradient check: element %d: analytic %.6g, numeric %.6g, difference %.3g exceeds tolerance %.3g", i, a, g, d, tol)
		}
	}
	return res, firstErr
}
