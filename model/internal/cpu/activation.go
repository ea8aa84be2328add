package cpu

// ELU writes the exponential linear unit with alpha = 1 of src into dst:
// x for x > 0, e^x − 1 otherwise. dst may be src (in place); otherwise they
// must not overlap. NaN stays NaN. ELU does not allocate in steady state. It
// panics if the lengths differ.
func ELU(dst, src []float32) {
	opCheckLen("ELU", "src", src, len(dst))
	t := opStart(eluRange)
	t.dst, t.a = dst, src
	opRun(t, len(dst), 8)
}

func eluRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	s := t.a[lo:hi]
	s = s[:len(d)]
	for i, x := range s {
		if x > 0 {
			d[i] = x
		} else {
			d[i] = expm1NonPos(x)
		}
	}
}

// ELUBackward writes into dx the gradient through ELU given the upstream
// gradient dy and ELU's output y (not its input): dy where y > 0, dy·(y + 1)
// elsewhere, since the derivative e^x equals y + 1 there. dx may be dy (in
// place); otherwise no two may overlap. ELUBackward does not allocate in
// steady state. It panics if the lengths differ.
func ELUBackward(dx, dy, y []float32) {
	opCheckLen("ELUBackward", "dy", dy, len(dx))
	opCheckLen("ELUBackward", "y", y, len(dx))
	t := opStart(eluBackwardRange)
	t.dst, t.a, t.b = dx, dy, y
	opRun(t, len(dx), 12)
}

func eluBackwardRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	g := t.a[lo:hi]
	y := t.b[lo:hi]
	g = g[:len(d)]
	y = y[:len(d)]
	for i, v := range y {
		if v > 0 {
			d[i] = g[i]
		} else {
			d[i] = g[i] * (v + 1)
		}
	}
}

// Sigmoid writes the logistic function 1 / (1 + e^−x) of src into dst. dst
// may be src (in place); otherwise they must not overlap. It is evaluated as
// 1 / (1 + e^−|x|) or its complement so that no exponential overflows; the
// result is exactly 0 for x < −87 and rounds to 1 for large x. NaN stays
// NaN.
// Sigmoid does not allocate in steady state. It panics if the lengths
// differ.
func Sigmoid(dst, src []float32) {
	SigmoidScale(dst, src, 1)
}

// SigmoidBackward writes into dx the gradient through Sigmoid given the
// upstream gradient dy and Sigmoid's output y: dy·y·(1 − y). dx may be dy
// (in place); otherwise no two may overlap. SigmoidBackward does not
// allocate in steady state. It panics if the lengths differ.
func SigmoidBackward(dx, dy, y []float32) {
	SigmoidScaleBackward(dx, dy, y, 1)
}

// SigmoidScale writes scale·sigmoid(src) into dst in one pass: the
// disparity head, whose output is d_max·sigmoid(x). dst may be src (in
// place); otherwise they must not overlap. SigmoidScale does not allocate in
// steady state. It panics if the lengths differ.
func SigmoidScale(dst, src []float32, scale float32) {
	opCheckLen("SigmoidScale", "src", src, len(dst))
	t := opStart(sigmoidScaleRange)
	t.dst, t.a, t.s = dst, src, scale
	opRun(t, len(dst), 8)
}

func sigmoidScaleRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	s := t.a[lo:hi]
	s = s[:len(d)]
	k := t.s
	for i, x := range s {
		var e float32
		if x > 0 {
			e = expNonPos(-x)
		} else {
			e = expNonPos(x)
		}
		r := k / (1 + e)
		if x > 0 {
			d[i] = r
		} else {
			d[i] = e * r
		}
	}
}

// SigmoidScaleBackward writes into dx the gradient through SigmoidScale
// given the upstream gradient dy, SigmoidScale's output y and the same
// scale: dy·y·(scale − y)/scale. A scale of 0 gives a zero gradient (the output
// is constant). dx may be dy (in place); otherwise no two may overlap.
// SigmoidScaleBackward does not allocate in steady state. It panics if the
// lengths differ.
func SigmoidScaleBackward(dx, dy, y []float32, scale float32) {
	opCheckLen("SigmoidScaleBackward", "dy", dy, len(dx))
	opCheckLen("SigmoidScaleBackward", "y", y, len(dx))
	if scale == 0 {
		clear(dx)
		return
	}
	t := opStart(sigmoidScaleBackwardRange)
	t.dst, t.a, t.b, t.s, t.t = dx, dy, y, scale, 1/scale
	opRun(t, len(dx), 12)
}

func sigmoidScaleBackwardRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	g := t.a[lo:hi]
	y := t.b[lo:hi]
	g = g[:len(d)]
	y = y[:len(d)]
	// (scale − y) is exact while y is within a factor 2 of scale (Sterbenz),
	// so the cancellation near saturation costs no more than y's rounding.
	scale, inv := t.s, t.t
	for i, v := range y {
		d[i] = g[i] * v * ((scale - v) * inv)
	}
}
