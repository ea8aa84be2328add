package cpu

// convGeom is the geometry of one convolution: the input (C, H, W) of one
// image, the square kernel, stride, dilation, padding, and the output size.
type convGeom struct {
	c, h, w      int
	k, s, d, pad int
	reflect      bool
	ho, wo       int
}

// reflectIndex mirrors i into [0, n) about the edge pixels (no repeat of
// the edge), as PyTorch's "reflect" padding does; valid for -n < i < 2n-1.
func reflectIndex(i, n int) int {
	if i < 0 {
		return -i
	}
	if i >= n {
		return 2*(n-1) - i
	}
	return i
}

// paddedIndex returns the index in [0, n) that the padded index i reads:
// i itself inside, its mirror under reflect padding, and ok = false under
// zero padding outside.
func paddedIndex(i, n int, reflect bool) (j int, ok bool) {
	if i >= 0 && i < n {
		return i, true
	}
	if !reflect {
		return 0, false
	}
	return reflectIndex(i, n), true
}

// validRange returns the output columns [lo, hi) whose input column
// ox*s+off lies inside [0, w).
func (g *convGeom) validRange(off int) (lo, hi int) {
	if off < 0 {
		lo = (-off + g.s - 1) / g.s
	}
	if w1 := g.w - 1 - off; w1 < 0 {
		hi = 0
	} else {
		hi = min(w1/g.s+1, g.wo)
	}
	lo = min(lo, hi)
	return lo, hi
}

// colTap decodes row kk = (ci*k+ky)*k+kx of the im2col matrix: its input
// channel ci, kernel row ky, input column offset off = kx·d − pad, and the
// output columns [lo, hi) whose input column lies inside the image.
func (g *convGeom) colTap(kk int) (ci, ky, off, lo, hi int) {
	kk2 := g.k * g.k
	ci, r := kk/kk2, kk%kk2
	ky, kx := r/g.k, r%g.k
	off = kx*g.d - g.pad
	lo, hi = g.validRange(off)
	return ci, ky, off, lo, hi
}

// colRow gathers row kk of the im2col matrix of image x (c×h×w), columns
// [p0, p0+cnt): dst[i*stride] = col[kk][p0+i]. Row kk = (ci*k+ky)*k+kx
// holds input channel ci shifted by kernel tap (ky, kx); column p = oy*wo+ox
// is one output pixel.
func (g *convGeom) colRow(dst []float32, stride int, x []float32, kk, p0, cnt int) {
	ci, ky, off, lo, hi := g.colTap(kk)
	plane := x[ci*g.h*g.w : (ci+1)*g.h*g.w]
	oy, ox := p0/g.wo, p0%g.wo
	o := 0
	for cnt > 0 {
		run := min(cnt, g.wo-ox)
		iy, ok := paddedIndex(oy*g.s+ky*g.d-g.pad, g.h, g.reflect)
		if !ok {
			for i := range run {
				dst[(o+i)*stride] = 0
			}
			o, cnt, ox, oy = o+run, cnt-run, 0, oy+1
			continue
		}
		row := plane[iy*g.w : (iy+1)*g.w]
		end := ox + run
		// Left border, interior, right border.
		a := ox
		for ; a < min(end, lo); a++ {
			dst[(o+a-ox)*stride] = g.border(row, a*g.s+off)
		}
		b := max(a, min(end, hi))
		if g.s == 1 && stride == 1 && b > a {
			copy(dst[o+a-ox:o+b-ox], row[a+off:b+off])
		} else {
			for i := a; i < b; i++ {
				dst[(o+i-ox)*stride] = row[i*g.s+off]
			}
		}
		for i := b; i < end; i++ {
			dst[(o+i-ox)*stride] = g.border(row, i*g.s+off)
		}
		o, cnt, ox, oy = o+run, cnt-run, 0, oy+1
	}
}

// border returns the padded value at column ix outside [0, w).
func (g *convGeom) border(row []float32, ix int) float32 {
	if !g.reflect {
		return 0
	}
	return row[reflectIndex(ix, g.w)]
}

// colRowAdd is the adjoint of colRow, walking the same runs (its loop
// stays beside colRow's rather than behind a shared walker, so that each
// inner loop is plain code): it scatters src[i*stride], the
// gradient of col[kk][p0+i], into the gradient dx of the image, adding
// padded taps onto the pixels they mirror (reflect) or dropping them
// (zero).
func (g *convGeom) colRowAdd(dx []float32, src []float32, stride int, kk, p0, cnt int) {
	ci, ky, off, lo, hi := g.colTap(kk)
	plane := dx[ci*g.h*g.w : (ci+1)*g.h*g.w]
	oy, ox := p0/g.wo, p0%g.wo
	o := 0
	for cnt > 0 {
		run := min(cnt, g.wo-ox)
		iy, ok := paddedIndex(oy*g.s+ky*g.d-g.pad, g.h, g.reflect)
		if !ok {
			o, cnt, ox, oy = o+run, cnt-run, 0, oy+1
			continue
		}
		row := plane[iy*g.w : (iy+1)*g.w]
		end := ox + run
		a := ox
		for ; a < min(end, lo); a++ {
			if g.reflect {
				row[reflectIndex(a*g.s+off, g.w)] += src[(o+a-ox)*stride]
			}
		}
		b := max(a, min(end, hi))
		for i := a; i < b; i++ {
			row[i*g.s+off] += src[(o+i-ox)*stride]
		}
		for i := b; i < end; i++ {
			if g.reflect {
				row[reflectIndex(i*g.s+off, g.w)] += src[(o+i-ox)*stride]
			}
		}
		o, cnt, ox, oy = o+run, cnt-run, 0, oy+1
	}
}

// colPacker presents the im2col matrix of one image as the B operand of
// the forward product (rows are output pixels, k runs over kernel taps).
type colPacker struct {
	g *convGeom
	x []float32
}

func (p *colPacker) pack(dst []float32, w, r0, nr, k0, kc int) {
	for kk := range kc {
		out := dst[kk*w : kk*w+w]
		p.g.colRow(out, 1, p.x, k0+kk, r0, nr)
		clear(out[nr:])
	}
}

// colTPacker presents the transposed im2col matrix as the B operand of the
// weight gradient (rows are kernel taps, k runs over output pixels).
type colTPacker struct {
	g *convGeom
	x []float32
}

func (p *colTPacker) pack(dst []float32, w, r0, nr, k0, kc int) {
	d := dst[:kc*w]
	for i := range nr {
		p.g.colRow(d[i:], w, p.x, r0+i, k0, kc)
	}
	if nr < w {
		for kk := range kc {
			clear(d[kk*w+nr : kk*w+w])
		}
	}
}
