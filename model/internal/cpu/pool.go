package cpu

// AvgPool2x2 writes into dst (shape (n, c, h/2, w/2), rounded down) the
// mean of every 2×2 block of src (shape (n, c, h, w)) at stride 2, as
// PyTorch's F.avg_pool2d(kernel_size=2, stride=2) without padding: an odd
// last row or column is dropped. dst and src must not overlap. If h or w is
// 1 the output is empty and AvgPool2x2 does nothing. AvgPool2x2 does not
// allocate in steady state. It panics if a dimension is not positive or a
// length disagrees with the shape.
func AvgPool2x2(dst, src []float32, n, c, h, w int) {
	opCheckShape("AvgPool2x2", n, c, h, w)
	oh, ow := h/2, w/2
	opCheckLen("AvgPool2x2", "src", src, n*c*h*w)
	opCheckLen("AvgPool2x2", "dst", dst, n*c*oh*ow)
	if oh == 0 || ow == 0 {
		return
	}
	t := opStart(avgPoolRows)
	t.dst, t.a, t.h, t.w = dst, src, h, w
	opRun(t, n*c*oh, 20*ow)
}

// avgPoolRows handles output rows lo <= r < hi, counted over all planes.
func avgPoolRows(t *opTask, lo, hi int) {
	h, w := t.h, t.w
	oh, ow := h/2, w/2
	for r := lo; r < hi; r++ {
		p, y := r/oh, r%oh
		r0 := t.a[(p*h+2*y)*w : (p*h+2*y+1)*w]
		r1 := t.a[(p*h+2*y+1)*w : (p*h+2*y+2)*w]
		sumBlocks2x2(t.dst[r*ow:(r+1)*ow], r0, r1, 0.25)
	}
}

// AvgPool2x2Backward writes into dsrc (shape (n, c, h, w)) the gradient of
// AvgPool2x2 given ddst (shape (n, c, h/2, w/2)): a quarter of each
// upstream value on each pixel of its block, and 0 on a dropped last row or
// column. It overwrites dsrc. dsrc and ddst must not overlap.
// AvgPool2x2Backward does not allocate in steady state. It panics if a
// dimension is not positive or a length disagrees with the shape.
func AvgPool2x2Backward(dsrc, ddst []float32, n, c, h, w int) {
	opCheckShape("AvgPool2x2Backward", n, c, h, w)
	oh, ow := h/2, w/2
	opCheckLen("AvgPool2x2Backward", "dsrc", dsrc, n*c*h*w)
	opCheckLen("AvgPool2x2Backward", "ddst", ddst, n*c*oh*ow)
	if oh == 0 || ow == 0 {
		clear(dsrc)
		return
	}
	t := opStart(avgPoolBackwardRows)
	t.dst, t.a, t.h, t.w = dsrc, ddst, h, w
	opRun(t, n*c*oh, 20*ow)
}

// avgPoolBackwardRows handles output rows lo <= r < hi over all planes,
// writing input rows 2y and 2y+1 and, for the last output row of a plane
// of odd height, the dropped input row as well.
func avgPoolBackwardRows(t *opTask, lo, hi int) {
	h, w := t.h, t.w
	oh, ow := h/2, w/2
	for r := lo; r < hi; r++ {
		p, y := r/oh, r%oh
		g := t.a[r*ow : (r+1)*ow]
		r0 := t.dst[(p*h+2*y)*w : (p*h+2*y+1)*w]
		r1 := t.dst[(p*h+2*y+1)*w : (p*h+2*y+2)*w]
		if w%2 == 1 {
			r0[w-1], r1[w-1] = 0, 0
		}
		spreadBlocks2x2(r0, r1, g, 0.25)
		if y == oh-1 && h%2 == 1 {
			clear(t.dst[(p*h+h-1)*w : (p*h+h)*w])
		}
	}
}

// sumBlocks2x2 writes into g[j] the sum of the block r0[2j], r0[2j+1],
// r1[2j], r1[2j+1], added in that order (PyTorch's, so the mean agrees to
// the last bit), times scale. The rows need at least 2·len(g) values.
func sumBlocks2x2(g, r0, r1 []float32, scale float32) {
	if blocksAVX2 {
		k := len(g) &^ 7
		sumBlocks2x2AVX2(g[:k], r0[:2*k], r1[:2*k], scale)
		g, r0, r1 = g[k:], r0[2*k:], r1[2*k:]
	}
	for len(g) > 0 && len(r0) > 1 && len(r1) > 1 {
		g[0] = (((r0[0] + r0[1]) + r1[0]) + r1[1]) * scale
		g, r0, r1 = g[1:], r0[2:], r1[2:]
	}
}

// spreadBlocks2x2 writes scale·v[j] into the block r0[2j], r0[2j+1],
// r1[2j], r1[2j+1] for every j. The rows need at least 2·len(v) values.
func spreadBlocks2x2(r0, r1, v []float32, scale float32) {
	if blocksAVX2 {
		k := len(v) &^ 7
		spreadBlocks2x2AVX2(r0[:2*k], r1[:2*k], v[:k], scale)
		r0, r1, v = r0[2*k:], r1[2*k:], v[k:]
	}
	for len(v) > 0 && len(r0) > 1 && len(r1) > 1 {
		x := scale * v[0]
		r0[0], r0[1], r1[0], r1[1] = x, x, x, x
		r0, r1, v = r0[2:], r1[2:], v[1:]
	}
}
