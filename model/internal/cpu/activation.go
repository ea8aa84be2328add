package cpu

import "math"

// ELU writes the exponential linear unit with alpha = 1 of src into dst:
// x for x > 0, e^x − 1 otherwise, within 2^-22 relative of the exact value
// (about 2 float32 ulps). dst may be src (in place); otherwise they must not
// overlap. NaN stays NaN. On amd64 with AVX2 and FMA, and on arm64 with
// ASIMD, the loop runs in assembly. ELU does not allocate in steady state. It panics if
// the lengths differ.
func ELU(dst, src []float32) { Procs(0).ELU(dst, src) }

// ELU is the package function ELU on at most p goroutines.
func (p Procs) ELU(dst, src []float32) {
	opElementwise(int(p), "ELU", eluRange, dst, "src", src, "", nil, 0, 0, 8)
}

func eluRange(t *opTask, lo, hi int) {
	d, s, _ := t.elements(lo, hi)
	if activationSIMD {
		n := len(d) &^ 7
		eluSIMD(d[:n], s[:n])
		d, s = d[n:], s[n:]
	}
	eluGo(d, s)
}

// eluGo is ELU's portable loop.
func eluGo(d, s []float32) {
	s = s[:len(d)]
	for i, x := range s {
		// Both branches are computed and one is kept by the sign bit: real
		// activations have random signs, and a mispredicted branch costs
		// more than the exponential.
		neg := signMask(x)
		v := math.Float32frombits(math.Float32bits(x) & neg) // min(x, 0)
		sc, r := expReduce(v)
		q := expPoly(r)
		m := selectBits(^expInRange(v), -1, sc*q+(sc-1)) // expm1NonPos(v)
		d[i] = selectBits(neg, m, x)
	}
}

// ELUBackward writes into dx the gradient through ELU given the upstream
// gradient dy and ELU's output y (not its input): dy where y > 0, dy·(y + 1)
// elsewhere, since the derivative e^x equals y + 1 there. dx may be dy (in
// place); otherwise no two may overlap. ELUBackward does not allocate in
// steady state. It panics if the lengths differ.
func ELUBackward(dx, dy, y []float32) { Procs(0).ELUBackward(dx, dy, y) }

// ELUBackward is the package function ELUBackward on at most p goroutines.
func (p Procs) ELUBackward(dx, dy, y []float32) {
	opElementwise(int(p), "ELUBackward", eluBackwardRange, dx, "dy", dy, "y", y, 0, 0, 12)
}

func eluBackwardRange(t *opTask, lo, hi int) {
	d, g, y := t.elements(lo, hi)
	if activationSIMD {
		n := len(d) &^ 7
		eluBackwardSIMD(d[:n], g[:n], y[:n])
		d, g, y = d[n:], g[n:], y[n:]
	}
	eluBackwardGo(d, g, y)
}

// eluBackwardGo is ELUBackward's portable loop.
func eluBackwardGo(d, g, y []float32) {
	g = g[:len(d)]
	y = y[:len(d)]
	for i, v := range y {
		d[i] = g[i] * selectBits(signMask(v), v+1, 1)
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
func SigmoidScale(dst, src []float32, scale float32) { Procs(0).SigmoidScale(dst, src, scale) }

// SigmoidScale is the package function SigmoidScale on at most p goroutines.
func (p Procs) SigmoidScale(dst, src []float32, scale float32) {
	opElementwise(int(p), "SigmoidScale", sigmoidScaleRange, dst, "src", src, "", nil, scale, 0, 8)
}

func sigmoidScaleRange(t *opTask, lo, hi int) {
	d, s, _ := t.elements(lo, hi)
	if activationSIMD {
		n := len(d) &^ 7
		sigmoidScaleSIMD(d[:n], s[:n], t.s)
		d, s = d[n:], s[n:]
	}
	sigmoidScaleGo(d, s, t.s)
}

// sigmoidScaleGo is SigmoidScale's portable loop.
func sigmoidScaleGo(d, s []float32, k float32) {
	s = s[:len(d)]
	for i, x := range s {
		// e^−|x| never overflows; the sign bit picks 1/(1+e) or e/(1+e)
		// without a branch (see eluGo).
		v := math.Float32frombits(math.Float32bits(x) | 1<<31) // −|x|
		sc, r := expReduce(v)
		q := expPoly(r)
		e := math.Float32frombits(math.Float32bits(sc+sc*q) & expInRange(v)) // expNonPos(v)
		p := k / (1 + e)
		d[i] = selectBits(signMask(x), e*p, p)
	}
}

// SigmoidScaleBackward writes into dx the gradient through SigmoidScale
// given the upstream gradient dy, SigmoidScale's output y and the same
// scale: dy·y·(scale − y)/scale. A scale of 0 gives a zero gradient (the output
// is constant). dx may be dy (in place); otherwise no two may overlap.
// SigmoidScaleBackward does not allocate in steady state. It panics if the
// lengths differ.
func SigmoidScaleBackward(dx, dy, y []float32, scale float32) {
	Procs(0).SigmoidScaleBackward(dx, dy, y, scale)
}

// SigmoidScaleBackward is the package function SigmoidScaleBackward on at most p goroutines.
func (p Procs) SigmoidScaleBackward(dx, dy, y []float32, scale float32) {
	opCheckLen("SigmoidScaleBackward", "dy", dy, len(dx))
	opCheckLen("SigmoidScaleBackward", "y", y, len(dx))
	if scale == 0 {
		clear(dx)
		return
	}
	opElementwise(int(p), "SigmoidScaleBackward", sigmoidScaleBackwardRange, dx, "dy", dy, "y", y, scale, 1/scale, 12)
}

func sigmoidScaleBackwardRange(t *opTask, lo, hi int) {
	d, g, y := t.elements(lo, hi)
	g = g[:len(d)]
	y = y[:len(d)]
	// (scale − y) is exact while y is within a factor 2 of scale (Sterbenz),
	// so the cancellation near saturation costs no more than y's rounding.
	scale, inv := t.s, t.t
	for i, v := range y {
		d[i] = g[i] * v * ((scale - v) * inv)
	}
}

// signMask returns all ones if x's sign bit is set (negative numbers, −0,
// and NaNs with the sign set) and 0 otherwise.
func signMask(x float32) uint32 { return uint32(int32(math.Float32bits(x)) >> 31) }

// selectBits returns neg where mask is all ones and pos where it is 0,
// without a branch (the compiler does not turn float selects into
// conditional moves).
func selectBits(mask uint32, neg, pos float32) float32 {
	return math.Float32frombits(math.Float32bits(neg)&mask | math.Float32bits(pos)&^mask)
}
