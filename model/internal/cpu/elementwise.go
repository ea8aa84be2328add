package cpu

// Add writes a + b into dst, element by element. dst may be a or b (so
// Add(g, g, h) accumulates h into g, as a skip connection's gradient needs);
// otherwise the three must not overlap. Add does not allocate in steady
// state. It panics if the lengths differ.
func Add(dst, a, b []float32) { Procs(0).Add(dst, a, b) }

// Add is the package function Add on at most p goroutines.
func (p Procs) Add(dst, a, b []float32) {
	opElementwise(int(p), "Add", addRange, dst, "a", a, "b", b, 0, 0, 12)
}

func addRange(t *opTask, lo, hi int) {
	d, a, b := t.elements(lo, hi)
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
	Procs(0).ScaleShift(dst, src, scale, shift)
}

// ScaleShift is the package function ScaleShift on at most p goroutines.
func (p Procs) ScaleShift(dst, src []float32, scale, shift float32) {
	opElementwise(int(p), "ScaleShift", scaleShiftRange, dst, "src", src, "", nil, scale, shift, 8)
}

func scaleShiftRange(t *opTask, lo, hi int) {
	d, s, _ := t.elements(lo, hi)
	s = s[:len(d)]
	a, b := t.s, t.t
	for i := range d {
		d[i] = a*s[i] + b
	}
}
