package cpu

// Bilinear 2× upsampling follows PyTorch's F.interpolate(scale_factor=2,
// mode='bilinear', align_corners=False): output pixel centre o maps to the
// input coordinate (o + ½)/2 − ½, clamped below at 0, and the sample is
// linear between the two neighbouring input pixels, the last one repeating
// past the edge. With a factor of 2 the weights are constant: output column
// 2j mixes input columns j and j−1 as ¾ and ¼, output column 2j+1 mixes j and
// j+1 as ¾ and ¼, where a neighbour outside the row is replaced by the edge
// column itself. Rows work the same way; the filter is separable.

// UpsampleBilinear2x writes into dst (shape (n, c, 2h, 2w)) the bilinear 2×
// upsampling of src (shape (n, c, h, w)), NCHW, with the semantics described
// above. dst and src must not overlap. UpsampleBilinear2x does not allocate
// in steady state. It panics if a dimension is not positive or a length
// disagrees with the shape.
func UpsampleBilinear2x(dst, src []float32, n, c, h, w int) {
	Procs(0).UpsampleBilinear2x(dst, src, n, c, h, w)
}

// UpsampleBilinear2x is the package function UpsampleBilinear2x on at most p goroutines.
func (p Procs) UpsampleBilinear2x(dst, src []float32, n, c, h, w int) {
	upsample2x(int(p), "UpsampleBilinear2x", upBilinearRows, dst, src, true, n, c, h, w)
}

// upBilinearRows handles input rows lo <= r < hi, counted over all planes,
// each of which gives two output rows.
func upBilinearRows(t *opTask, lo, hi int) {
	h, w := t.h, t.w
	for r := lo; r < hi; r++ {
		p, y := r/h, r%h
		plane := t.a[p*h*w : (p+1)*h*w]
		mid := plane[y*w : (y+1)*w]
		up, down := mid, mid
		if y > 0 {
			up = plane[(y-1)*w : y*w]
		}
		if y < h-1 {
			down = plane[(y+1)*w : (y+2)*w]
		}
		out := t.dst[(2*r)*2*w : (2*r+2)*2*w]
		upBilinearRow(out[:2*w], mid, up)
		upBilinearRow(out[2*w:], mid, down)
	}
}

// upBilinearRow writes into out (2·len(a) values) the horizontal 2×
// upsampling of the row ¾·a + ¼·b.
func upBilinearRow(out, a, b []float32) {
	j := 0
	if upsampleSIMD && len(a) >= 10 {
		// Columns 1 … k in assembly, 8 at a time; each block reads one
		// column either side, so column 0 and the last one stay in Go.
		k := (len(a) - 2) &^ 7
		upBilinearRowSIMD(out[2:2+2*k], a[:k+2], b[:k+2])
		m0 := 0.75*a[0] + 0.25*b[0]
		out[0] = 0.75*m0 + 0.25*m0
		out[1] = 0.75*m0 + 0.25*(0.75*a[1]+0.25*b[1])
		j = k + 1
	}
	upBilinearCols(out[2*j:], a, b, j)
}

// upBilinearCols is upBilinearRow for the columns j0 … len(a)−1, writing
// out[0:] for column j0 onwards.
func upBilinearCols(out, a, b []float32, j0 int) {
	b = b[:len(a)]
	prev := 0.75*a[max(j0-1, 0)] + 0.25*b[max(j0-1, 0)]
	a, b = a[j0:], b[j0:]
	cur := 0.75*a[0] + 0.25*b[0]
	if j0 == 0 {
		prev = cur
	}
	// The loop walks out in pairs and a, b one by one by reslicing, and its
	// condition covers every index, so the body has no bounds checks.
	o := out
	for len(a) > 1 && len(b) > 1 && len(o) > 3 {
		next := 0.75*a[1] + 0.25*b[1]
		o[0] = 0.75*cur + 0.25*prev
		o[1] = 0.75*cur + 0.25*next
		o, a, b = o[2:], a[1:], b[1:]
		prev, cur = cur, next
	}
	o[0] = 0.75*cur + 0.25*prev
	o[1] = cur
}

// UpsampleBilinear2xBackward writes into dsrc (shape (n, c, h, w)) the
// gradient of UpsampleBilinear2x given the upstream gradient ddst (shape
// (n, c, 2h, 2w)): every input pixel gathers the upstream values of the
// output pixels it contributed to, with the same weights. It overwrites
// dsrc. dsrc and ddst must not overlap. UpsampleBilinear2xBackward does not
// allocate in steady state. It panics if a dimension is not positive or a
// length disagrees with the shape.
func UpsampleBilinear2xBackward(dsrc, ddst []float32, n, c, h, w int) {
	Procs(0).UpsampleBilinear2xBackward(dsrc, ddst, n, c, h, w)
}

// UpsampleBilinear2xBackward is the package function UpsampleBilinear2xBackward on at most p goroutines.
func (p Procs) UpsampleBilinear2xBackward(dsrc, ddst []float32, n, c, h, w int) {
	upsample2x(int(p), "UpsampleBilinear2xBackward", upBilinearBackwardRows, dsrc, ddst, false, n, c, h, w)
}

// upBilinearBackwardRows handles input rows lo <= r < hi over all planes.
// Input row y receives ¾ of output rows 2y and 2y+1 and ¼ of rows 2y−1 and
// 2y+2, where a row outside the plane is replaced by the edge row (whose
// weight is then the full 1 it had in the forward pass).
func upBilinearBackwardRows(t *opTask, lo, hi int) {
	h, w := t.h, t.w
	w2 := 2 * w
	for r := lo; r < hi; r++ {
		p, y := r/h, r%h
		plane := t.a[p*4*h*w : (p+1)*4*h*w]
		r0 := plane[2*y*w2 : (2*y+1)*w2]
		r1 := plane[(2*y+1)*w2 : (2*y+2)*w2]
		ru, rd := r0, r1
		if y > 0 {
			ru = plane[(2*y-1)*w2 : 2*y*w2]
		}
		if y < h-1 {
			rd = plane[(2*y+2)*w2 : (2*y+3)*w2]
		}
		upBilinearBackwardRow(t.dst[r*w:(r+1)*w], r0, r1, ru, rd)
	}
}

// upBilinearBackwardRow writes into g (w values) the horizontal gather of
// the column sums s[k] = ¾·(r0[k]+r1[k]) + ¼·(ru[k]+rd[k]) (2w values):
// g[j] = ¾·(s[2j]+s[2j+1]) + ¼·(s[2j−1]+s[2j+2]), with the edge columns
// standing in for s[−1] and s[2w].
func upBilinearBackwardRow(g, r0, r1, ru, rd []float32) {
	j := 0
	if upsampleSIMD && len(g) >= 10 {
		// Columns 1 … k in assembly, 8 at a time; column 0 and the last
		// ones stay in Go (each block reads one column pair either side).
		k := (len(g) - 2) &^ 7
		upBilinearBackRowSIMD(g[1:1+k], r0, r1, ru, rd)
		j = k + 1
		upBilinearBackCols(g[:1], r0, r1, ru, rd, 0)
	}
	upBilinearBackCols(g[j:], r0, r1, ru, rd, j)
}

// upBilinearBackCols is upBilinearBackwardRow for the columns j0 onwards,
// writing g[0:] for column j0; g may end before the row does.
func upBilinearBackCols(g, r0, r1, ru, rd []float32, j0 int) {
	col := func(k int) float32 { return 0.75*(r0[k]+r1[k]) + 0.25*(ru[k]+rd[k]) }
	left := col(max(2*j0-1, 0))
	r0, r1, ru, rd = r0[2*j0:], r1[2*j0:], ru[2*j0:], rd[2*j0:]
	s0 := 0.75*(r0[0]+r1[0]) + 0.25*(ru[0]+rd[0])
	if j0 == 0 {
		left = s0
	}
	for len(g) > 0 && len(r0) > 2 && len(r1) > 2 && len(ru) > 2 && len(rd) > 2 {
		s1 := 0.75*(r0[1]+r1[1]) + 0.25*(ru[1]+rd[1])
		s2 := 0.75*(r0[2]+r1[2]) + 0.25*(ru[2]+rd[2])
		g[0] = 0.75*(s0+s1) + 0.25*(left+s2)
		left, s0 = s1, s2
		g, r0, r1, ru, rd = g[1:], r0[2:], r1[2:], ru[2:], rd[2:]
	}
	if len(g) > 0 { // the last column: its right neighbour is itself
		s1 := 0.75*(r0[1]+r1[1]) + 0.25*(ru[1]+rd[1])
		g[0] = 0.75*(s0+s1) + 0.25*(left+s1)
	}
}

// UpsampleNearest2x writes into dst (shape (n, c, 2h, 2w)) the nearest 2×
// upsampling of src (shape (n, c, h, w)): every input pixel becomes a 2×2
// block, as PyTorch's F.interpolate(scale_factor=2, mode='nearest'). dst
// and src must not overlap. UpsampleNearest2x does not allocate in steady
// state. It panics if a dimension is not positive or a length disagrees
// with the shape.
func UpsampleNearest2x(dst, src []float32, n, c, h, w int) {
	Procs(0).UpsampleNearest2x(dst, src, n, c, h, w)
}

// UpsampleNearest2x is the package function UpsampleNearest2x on at most p goroutines.
func (p Procs) UpsampleNearest2x(dst, src []float32, n, c, h, w int) {
	upsample2x(int(p), "UpsampleNearest2x", upNearestRows, dst, src, true, n, c, h, w)
}

// upNearestRows handles input rows lo <= r < hi over all planes.
func upNearestRows(t *opTask, lo, hi int) {
	w := t.w
	for r := lo; r < hi; r++ {
		spreadBlocks2x2(t.dst[2*r*2*w:(2*r+1)*2*w], t.dst[(2*r+1)*2*w:(2*r+2)*2*w], t.a[r*w:(r+1)*w], 1)
	}
}

// UpsampleNearest2xBackward writes into dsrc (shape (n, c, h, w)) the
// gradient of UpsampleNearest2x given ddst (shape (n, c, 2h, 2w)): the sum
// of each 2×2 block. It overwrites dsrc. dsrc and ddst must not overlap.
// UpsampleNearest2xBackward does not allocate in steady state. It panics if
// a dimension is not positive or a length disagrees with the shape.
func UpsampleNearest2xBackward(dsrc, ddst []float32, n, c, h, w int) {
	Procs(0).UpsampleNearest2xBackward(dsrc, ddst, n, c, h, w)
}

// UpsampleNearest2xBackward is the package function UpsampleNearest2xBackward on at most p goroutines.
func (p Procs) UpsampleNearest2xBackward(dsrc, ddst []float32, n, c, h, w int) {
	upsample2x(int(p), "UpsampleNearest2xBackward", upNearestBackwardRows, dsrc, ddst, false, n, c, h, w)
}

// upNearestBackwardRows handles input rows lo <= r < hi over all planes.
func upNearestBackwardRows(t *opTask, lo, hi int) {
	w := t.w
	for r := lo; r < hi; r++ {
		sumBlocks2x2(t.dst[r*w:(r+1)*w], t.a[2*r*2*w:(2*r+1)*2*w], t.a[(2*r+1)*2*w:(2*r+2)*2*w], 1)
	}
}
