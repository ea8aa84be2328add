package cpu

// Add writes a + b into dst, element by element. dst may be a or b (so
// Add(g, g, h) accumulates h into g, as a skip connection's gradient needs);
// otherwise the three must not overlap. Add does not allocate in steady
// state. It panics if the lengths differ.
func Add(dst, a, b []float32) {
	opCheckLen("Add", "a", a, len(dst))
	opCheckLen("Add", "b", b, len(dst))
	t := opStart(addRange)
	t.dst, t.a, t.b = dst, a, b
	opRun(t, len(dst), 12)
}

func addRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	a := t.a[lo:hi]
	b := t.b[lo:hi]
	a = a[:len(d)]
	b = b[:len(d)]
	for i := range d {
		d[i] = a[i] + b[i]
	}
}

// ScaleShift writes scale·src + shift into dst, element by element. dst may
// be src; otherwise they must not overlap. Its input gradient is
// ScaleShift(dsrc, ddst, scale, 0). ScaleShift does not allocate in steady
// state. It panics if the lengths differ.
func ScaleShift(dst, src []float32, scale, shift float32) {
	opCheckLen("ScaleShift", "src", src, len(dst))
	t := opStart(scaleShiftRange)
	t.dst, t.a, t.s, t.t = dst, src, scale, shift
	opRun(t, len(dst), 8)
}

func scaleShiftRange(t *opTask, lo, hi int) {
	d := t.dst[lo:hi]
	s := t.a[lo:hi]
	s = s[:len(d)]
	a, b := t.s, t.t
	for i := range d {
		d[i] = a*s[i] + b
	}
}
