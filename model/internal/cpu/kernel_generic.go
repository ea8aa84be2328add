package cpu

// The portable micro-kernels compute a 1×6 tile: six accumulators, six B
// values and one A value fit the 15 vector registers the Go compiler uses
// for floats on amd64 (X15 is reserved), even though it schedules every
// product of a loop iteration before the sums that consume them. Larger
// tiles (4×4, 2×4) spilled accumulators to the stack on every step and
// measured 1.4× to 2.7× slower per multiply-add (go test -tags purego,
// cpu-ns per multiply-add, on a shared 2-core Zen 5 VM).

// kernelGeneric1x6 is the portable microKernel.
func kernelGeneric1x6(k int, a, b, c []float32, ldc int, acc bool) {
	var c0, c1, c2, c3, c4, c5 float32
	a = a[:k]
	b = b[:6*k]
	for p, a0 := range a {
		bp := b[6*p : 6*p+6 : 6*p+6]
		c0 += a0 * bp[0]
		c1 += a0 * bp[1]
		c2 += a0 * bp[2]
		c3 += a0 * bp[3]
		c4 += a0 * bp[4]
		c5 += a0 * bp[5]
	}
	store1x6(c, acc, c0, c1, c2, c3, c4, c5)
}

// indirectGeneric1x6 is the portable indirectKernel.
func indirectGeneric1x6(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool) {
	var c0, c1, c2, c3, c4, c5 float32
	a = a[:k]
	for p, o := range offs[:k] {
		a0 := a[p]
		bp := b[o : o+6 : o+6]
		c0 += a0 * bp[0]
		c1 += a0 * bp[1]
		c2 += a0 * bp[2]
		c3 += a0 * bp[3]
		c4 += a0 * bp[4]
		c5 += a0 * bp[5]
	}
	store1x6(c, acc, c0, c1, c2, c3, c4, c5)
}

func store1x6(c []float32, acc bool, c0, c1, c2, c3, c4, c5 float32) {
	r := c[0:6:6]
	if acc {
		c0 += r[0]
		c1 += r[1]
		c2 += r[2]
		c3 += r[3]
		c4 += r[4]
		c5 += r[5]
	}
	r[0], r[1], r[2], r[3], r[4], r[5] = c0, c1, c2, c3, c4, c5
}

// dotGeneric2x4 is the portable dotKernel.
func dotGeneric2x4(n int, y []float32, ldy int, x []float32, offs []int, out []float32, ldo int) {
	y0 := y[:n]
	y1 := y[ldy : ldy+n]
	x0 := x[offs[0] : offs[0]+n]
	x1 := x[offs[1] : offs[1]+n]
	x2 := x[offs[2] : offs[2]+n]
	x3 := x[offs[3] : offs[3]+n]
	var s00, s01, s02, s03, s10, s11, s12, s13 float32
	for t := range y0 {
		a, b := y0[t], y1[t]
		s00 += a * x0[t]
		s01 += a * x1[t]
		s02 += a * x2[t]
		s03 += a * x3[t]
		s10 += b * x0[t]
		s11 += b * x1[t]
		s12 += b * x2[t]
		s13 += b * x3[t]
	}
	o0 := out[0:4:4]
	o1 := out[ldo : ldo+4 : ldo+4]
	o0[0] += s00
	o0[1] += s01
	o0[2] += s02
	o0[3] += s03
	o1[0] += s10
	o1[1] += s11
	o1[2] += s12
	o1[3] += s13
}
