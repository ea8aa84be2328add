package cpu

// kernelGeneric4x4 is the portable 4×4 micro-kernel; the sixteen
// accumulators live in registers on most architectures.
func kernelGeneric4x4(k int, a, b, c []float32, ldc int, acc bool) {
	var c00, c01, c02, c03 float32
	var c10, c11, c12, c13 float32
	var c20, c21, c22, c23 float32
	var c30, c31, c32, c33 float32
	a = a[:4*k]
	b = b[:4*k]
	for p := 0; p < len(a); p += 4 {
		ap := a[p : p+4 : p+4]
		bp := b[p : p+4 : p+4]
		a0, a1, a2, a3 := ap[0], ap[1], ap[2], ap[3]
		b0, b1, b2, b3 := bp[0], bp[1], bp[2], bp[3]
		c00 += a0 * b0
		c01 += a0 * b1
		c02 += a0 * b2
		c03 += a0 * b3
		c10 += a1 * b0
		c11 += a1 * b1
		c12 += a1 * b2
		c13 += a1 * b3
		c20 += a2 * b0
		c21 += a2 * b1
		c22 += a2 * b2
		c23 += a2 * b3
		c30 += a3 * b0
		c31 += a3 * b1
		c32 += a3 * b2
		c33 += a3 * b3
	}
	r0 := c[0:4:4]
	r1 := c[ldc : ldc+4 : ldc+4]
	r2 := c[2*ldc : 2*ldc+4 : 2*ldc+4]
	r3 := c[3*ldc : 3*ldc+4 : 3*ldc+4]
	if acc {
		c00 += r0[0]
		c01 += r0[1]
		c02 += r0[2]
		c03 += r0[3]
		c10 += r1[0]
		c11 += r1[1]
		c12 += r1[2]
		c13 += r1[3]
		c20 += r2[0]
		c21 += r2[1]
		c22 += r2[2]
		c23 += r2[3]
		c30 += r3[0]
		c31 += r3[1]
		c32 += r3[2]
		c33 += r3[3]
	}
	r0[0], r0[1], r0[2], r0[3] = c00, c01, c02, c03
	r1[0], r1[1], r1[2], r1[3] = c10, c11, c12, c13
	r2[0], r2[1], r2[2], r2[3] = c20, c21, c22, c23
	r3[0], r3[1], r3[2], r3[3] = c30, c31, c32, c33
}

// indirectGeneric4x4 is the portable indirectKernel.
func indirectGeneric4x4(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool) {
	var c00, c01, c02, c03 float32
	var c10, c11, c12, c13 float32
	var c20, c21, c22, c23 float32
	var c30, c31, c32, c33 float32
	a = a[:4*k]
	for p, o := range offs[:k] {
		ap := a[4*p : 4*p+4 : 4*p+4]
		bp := b[o : o+4 : o+4]
		a0, a1, a2, a3 := ap[0], ap[1], ap[2], ap[3]
		b0, b1, b2, b3 := bp[0], bp[1], bp[2], bp[3]
		c00 += a0 * b0
		c01 += a0 * b1
		c02 += a0 * b2
		c03 += a0 * b3
		c10 += a1 * b0
		c11 += a1 * b1
		c12 += a1 * b2
		c13 += a1 * b3
		c20 += a2 * b0
		c21 += a2 * b1
		c22 += a2 * b2
		c23 += a2 * b3
		c30 += a3 * b0
		c31 += a3 * b1
		c32 += a3 * b2
		c33 += a3 * b3
	}
	r0 := c[0:4:4]
	r1 := c[ldc : ldc+4 : ldc+4]
	r2 := c[2*ldc : 2*ldc+4 : 2*ldc+4]
	r3 := c[3*ldc : 3*ldc+4 : 3*ldc+4]
	if acc {
		c00 += r0[0]
		c01 += r0[1]
		c02 += r0[2]
		c03 += r0[3]
		c10 += r1[0]
		c11 += r1[1]
		c12 += r1[2]
		c13 += r1[3]
		c20 += r2[0]
		c21 += r2[1]
		c22 += r2[2]
		c23 += r2[3]
		c30 += r3[0]
		c31 += r3[1]
		c32 += r3[2]
		c33 += r3[3]
	}
	r0[0], r0[1], r0[2], r0[3] = c00, c01, c02, c03
	r1[0], r1[1], r1[2], r1[3] = c10, c11, c12, c13
	r2[0], r2[1], r2[2], r2[3] = c20, c21, c22, c23
	r3[0], r3[1], r3[2], r3[3] = c30, c31, c32, c33
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
