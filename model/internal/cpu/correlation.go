package cpu

import (
	"fmt"

	"github.com/parallaxdepth/parallax/internal/parallel"
)

// The correlation cost volume compares every left-view feature vector with
// the right-view feature vectors on the same row, 0 … disps−1 pixels to its
// left (a point at column x of the left view appears at column x − k of the
// right view, the sign of package warp):
//
//	dst[n,k,y,x] = (1/c) · Σ_ch left[n,ch,y,x] · right[n,ch,y,x−k]  for x−k ≥ 0,
//	dst[n,k,y,x] = 0                                                 for x−k < 0.
//
// Each output row (n, k, y) is one sum over the channels in increasing
// order, computed by one goroutine, so results are the same bits for any
// GOMAXPROCS. Work is split over the rows (n, y) of the inputs.

// corrGrainMACs is the number of multiply-adds one range of rows does
// before parallel.For hands out the next: a few tens of microseconds of work,
// well above the cost of waking a second core.
const corrGrainMACs = 1 << 18

// Correlation writes into dst (shape (n, disps, h, w)) the correlation cost
// volume of left and right (both (n, c, h, w)) defined above; output
// channel k holds the match at a shift of k pixels. A disps larger than w
// gives all-zero channels k ≥ w. dst must not overlap left or right.
// Correlation does not allocate in steady state. It panics if a dimension
// or disps is not positive, or a slice length disagrees with the shape.
func Correlation(dst, left, right []float32, n, c, h, w, disps int) {
	Procs(0).Correlation(dst, left, right, n, c, h, w, disps)
}

// Correlation is the package function Correlation on at most p goroutines.
func (p Procs) Correlation(dst, left, right []float32, n, c, h, w, disps int) {
	corrCheck("Correlation", n, c, h, w, disps)
	opCheckLen("Correlation", "left", left, n*c*h*w)
	opCheckLen("Correlation", "right", right, n*c*h*w)
	opCheckLen("Correlation", "dst", dst, n*disps*h*w)
	t := corrStart(corrForwardRows)
	t.dst, t.left, t.right = dst, left, right
	corrRun(int(p), t, n, c, h, w, disps)
}

// CorrelationBackward writes into dleft and dright (both (n, c, h, w)) the
// gradients of a scalar loss with respect to Correlation's inputs, given
// ddst (shape (n, disps, h, w)), the gradient with respect to its output:
//
//	dleft[n,ch,y,x]  = (1/c) · Σ_k ddst[n,k,y,x]   · right[n,ch,y,x−k]  over x−k ≥ 0,
//	dright[n,ch,y,x] = (1/c) · Σ_k ddst[n,k,y,x+k] · left[n,ch,y,x+k]   over x+k < w,
//
// each summed over k in increasing order. The upstream gradient at the
// constant outputs (x < k) is ignored. Both gradients are overwritten;
// either may be nil when it is not needed. No gradient may overlap an
// input. CorrelationBackward does not allocate in steady state. It panics
// if a dimension or disps is not positive, or a non-nil slice's length
// disagrees with the shape.
func CorrelationBackward(dleft, dright, ddst, left, right []float32, n, c, h, w, disps int) {
	Procs(0).CorrelationBackward(dleft, dright, ddst, left, right, n, c, h, w, disps)
}

// CorrelationBackward is the package function CorrelationBackward on at most p goroutines.
func (p Procs) CorrelationBackward(dleft, dright, ddst, left, right []float32, n, c, h, w, disps int) {
	corrCheck("CorrelationBackward", n, c, h, w, disps)
	opCheckLen("CorrelationBackward", "ddst", ddst, n*disps*h*w)
	if dleft != nil {
		opCheckLen("CorrelationBackward", "dleft", dleft, n*c*h*w)
		opCheckLen("CorrelationBackward", "right", right, n*c*h*w)
	}
	if dright != nil {
		opCheckLen("CorrelationBackward", "dright", dright, n*c*h*w)
		opCheckLen("CorrelationBackward", "left", left, n*c*h*w)
	}
	if dleft == nil && dright == nil {
		return
	}
	t := corrStart(corrBackwardRows)
	t.dst, t.left, t.right, t.dleft, t.dright = ddst, left, right, dleft, dright
	corrRun(int(p), t, n, c, h, w, disps)
}

// corrCheck panics unless every dimension and disps is positive.
func corrCheck(fn string, n, c, h, w, disps int) {
	opCheckShape(fn, n, c, h, w)
	if disps <= 0 {
		panic(fmt.Sprintf("cpu.%s: invalid disparity count %d", fn, disps))
	}
}

// corrTask carries one call's arguments to the ranges of rows (n, y); it is
// recycled like opTask, with its run method value bound once.
type corrTask struct {
	dst, left, right, dleft, dright []float32
	n, c, h, w, disps               int
	body                            func(t *corrTask, lo, hi int)
	run                             func(lo, hi int)
}

func (t *corrTask) exec(lo, hi int) { t.body(t, lo, hi) }

var corrFree = make(parallel.FreeList[corrTask], 16)

func corrStart(body func(t *corrTask, lo, hi int)) *corrTask {
	t := corrFree.Get(func(t *corrTask) { t.run = t.exec })
	t.body = body
	return t
}

// corrRun runs t.body over the rows (n, y), in ranges of about
// corrGrainMACs multiply-adds, and recycles t.
func corrRun(procs int, t *corrTask, n, c, h, w, disps int) {
	t.n, t.c, t.h, t.w, t.disps = n, c, h, w, disps
	rows := n * h
	grain := max(1, corrGrainMACs/(c*w*min(disps, w)))
	parallel.ForN(procs, rows, grain, t.run)
	*t = corrTask{run: t.run}
	corrFree.Put(t)
}

// rowStarts returns, for the input row r = n·h + y, where row y of channel
// 0 of item n starts in the inputs (in) and in the cost volume (out).
func (t *corrTask) rowStarts(r int) (in, out int) {
	plane := t.h * t.w
	b, y := r/t.h, r%t.h
	return b*t.c*plane + y*t.w, b*t.disps*plane + y*t.w
}

// corrForwardRows computes the output rows (n, k, y) of the input rows
// lo <= r < hi, r = n·h + y.
func corrForwardRows(t *corrTask, lo, hi int) {
	if corrAVX2 {
		corrForwardRowsAVX2(t, lo, hi)
		return
	}
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	for r := lo; r < hi; r++ {
		in, out := t.rowStarts(r)
		for k := 0; k < disps; k++ {
			o := t.dst[out+k*plane : out+k*plane+w]
			if k >= w {
				clear(o)
				continue
			}
			clear(o[:k])
			o = o[k:]
			for ch := 0; ch < c; ch++ {
				l := t.left[in+ch*plane+k : in+ch*plane+w]
				rr := t.right[in+ch*plane : in+ch*plane+w-k]
				if ch == 0 {
					mulRow(o, l, rr)
				} else {
					mulAddRow(o, l, rr)
				}
			}
			scaleRow(o, scale)
		}
	}
}

// corrBackwardRows computes the gradient rows (n, ch, y) of the input rows
// lo <= r < hi: corrForwardRows's adjoint, over the same rows and
// displacements (two loops rather than one walk with two bodies, so that
// each inner loop is plain code).
func corrBackwardRows(t *corrTask, lo, hi int) {
	if corrAVX2 {
		corrBackwardRowsAVX2(t, lo, hi)
		return
	}
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	kmax := min(disps, w)
	for r := lo; r < hi; r++ {
		in, out := t.rowStarts(r)
		for ch := 0; ch < c; ch++ {
			if t.dleft != nil {
				dl := t.dleft[in+ch*plane : in+ch*plane+w]
				rr := t.right[in+ch*plane : in+ch*plane+w]
				clear(dl)
				for k := 0; k < kmax; k++ {
					g := t.dst[out+k*plane+k : out+k*plane+w]
					mulAddRow(dl[k:], g, rr[:w-k])
				}
				scaleRow(dl, scale)
			}
			if t.dright != nil {
				dr := t.dright[in+ch*plane : in+ch*plane+w]
				l := t.left[in+ch*plane : in+ch*plane+w]
				clear(dr)
				for k := 0; k < kmax; k++ {
					g := t.dst[out+k*plane+k : out+k*plane+w]
					mulAddRow(dr[:w-k], g, l[k:])
				}
				scaleRow(dr, scale)
			}
		}
	}
}

// mulRow sets o[i] = a[i]·b[i]; a and b are at least as long as o.
func mulRow(o, a, b []float32) {
	a, b = a[:len(o)], b[:len(o)]
	for i := range o {
		o[i] = a[i] * b[i]
	}
}

// mulAddRow adds a[i]·b[i] to o[i]; a and b are at least as long as o.
func mulAddRow(o, a, b []float32) {
	a, b = a[:len(o)], b[:len(o)]
	for i := range o {
		o[i] += a[i] * b[i]
	}
}

// scaleRow multiplies o by s.
func scaleRow(o []float32, s float32) {
	for i := range o {
		o[i] *= s
	}
}

// The AVX2 loops read the rows they shift, x − k or x + k, from copies:
// for each input row (n, y), one padded row of stride values per channel
// (and per shift for the upstream gradient): pad zeros, the w values, then
// zeros to the end. Every shifted read then lands inside its row, so the
// loops need no edge cases, and the c channel rows, which in the tensor lie
// h·w values apart and can fall into the same cache sets, come together.
// Rows read only at x (the left view in the forward pass) are read in
// place. Columns past the last multiple of 8, and channels past the last
// multiple of 8 in the gradients, are done in Go on the same rows.

// corrLayout returns the padding and the stride of the padded rows for
// shifts 0 … kmax−1 over rows of w values.
func corrLayout(w, kmax int) (pad, stride int) {
	pad = (kmax + 7) &^ 7
	return pad, 2*pad + (w+7)&^7 + 8
}

// corrScratch holds the padded-row buffers of idle ranges; like opFree, a
// channel keeps them across garbage collections.
var corrScratch = make(chan []float32, 16)

// corrGetScratch returns n zeros, from corrScratch if a buffer there is
// large enough.
func corrGetScratch(n int) []float32 {
	select {
	case b := <-corrScratch:
		if cap(b) >= n {
			b = b[:n]
			clear(b)
			return b
		}
	default:
	}
	return make([]float32, n)
}

func corrPutScratch(b []float32) {
	select {
	case corrScratch <- b:
	default:
	}
}

// corrForwardRowsAVX2 is corrForwardRows with the loops of
// correlation_amd64.s. Only the right rows are copied: the left ones are
// read in place, at x, never outside the row.
func corrForwardRowsAVX2(t *corrTask, lo, hi int) {
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	kmax := min(disps, w)
	pad, stride := corrLayout(w, kmax)
	rp := corrGetScratch(c * stride)
	w8 := w &^ 7
	for r := lo; r < hi; r++ {
		in, out := t.rowStarts(r)
		for ch := 0; ch < c; ch++ {
			src, p := in+ch*plane, ch*stride+pad
			copy(rp[p:p+w], t.right[src:src+w])
		}
		l := t.left[in:]
		for k0 := 0; k0 < kmax; k0 += 8 {
			kc := min(8, kmax-k0)
			o := t.dst[out+k0*plane:]
			if w8 > 0 {
				corrForwardAVX2(o, plane, l, plane, rp[pad-k0:], stride, c, w8, kc, scale)
			}
			if w8 < w {
				corrForwardCols(o, plane, l, plane, rp, pad-k0, stride, c, w8, w, kc, scale)
			}
		}
		for k := 0; k < disps; k++ {
			row := t.dst[out+k*plane : out+k*plane+w]
			clear(row[:min(k, w)])
		}
	}
	corrPutScratch(rp)
}

// corrForwardCols is corrForwardAVX2 in Go for the columns x0 <= x < x1,
// with r read from roff on.
func corrForwardCols(o []float32, ostride int, l []float32, lstride int, r []float32, roff, rstride, c, x0, x1, kc int, scale float32) {
	for j := 0; j < kc; j++ {
		for x := x0; x < x1; x++ {
			var s float32
			for ch := 0; ch < c; ch++ {
				s += l[ch*lstride+x] * r[roff+ch*rstride+x-j]
			}
			o[j*ostride+x] = s * scale
		}
	}
}

// corrBackwardRowsAVX2 is corrBackwardRows with the loops of
// correlation_amd64.s: dleft reads the upstream rows at x and the right
// rows at x − k, dright both at x + k.
func corrBackwardRowsAVX2(t *corrTask, lo, hi int) {
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	kmax := min(disps, w)
	pad, stride := corrLayout(w, kmax)
	buf := corrGetScratch((2*c + kmax) * stride)
	lp, rp, gp := buf[:c*stride], buf[c*stride:2*c*stride], buf[2*c*stride:]
	w8, c8 := w&^7, c&^7
	for r := lo; r < hi; r++ {
		in, out := t.rowStarts(r)
		for k := 0; k < kmax; k++ {
			// The upstream values at the constant outputs (x < k) are
			// ignored: their copies stay 0.
			row := gp[k*stride+pad : k*stride+pad+w]
			clear(row[:k])
			copy(row[k:], t.dst[out+k*plane+k:out+k*plane+w])
		}
		for ch := 0; ch < c; ch++ {
			src, p := in+ch*plane, ch*stride+pad
			if t.dright != nil {
				copy(lp[p:p+w], t.left[src:src+w])
			}
			if t.dleft != nil {
				copy(rp[p:p+w], t.right[src:src+w])
			}
		}
		for _, d := range [2]struct {
			grad, v      []float32
			gstep, vstep int
		}{{t.dleft, rp, stride, -1}, {t.dright, lp, stride + 1, 1}} {
			if d.grad == nil {
				continue
			}
			o := d.grad[in:]
			if w8 > 0 {
				for ch0 := 0; ch0 < c8; ch0 += 8 {
					corrBackwardAVX2(o[ch0*plane:], plane, gp[pad:], d.gstep, d.v[ch0*stride+pad:], d.vstep, stride, kmax, w8, scale)
				}
				corrBackwardCols(o, plane, gp, pad, d.gstep, d.v, pad, d.vstep, stride, kmax, 0, c8, w8, w, scale)
				corrBackwardCols(o, plane, gp, pad, d.gstep, d.v, pad, d.vstep, stride, kmax, c8, c, 0, w, scale)
			} else {
				corrBackwardCols(o, plane, gp, pad, d.gstep, d.v, pad, d.vstep, stride, kmax, 0, c, 0, w, scale)
			}
		}
	}
	corrPutScratch(buf)
}

// corrBackwardCols is corrBackwardAVX2 in Go for the rows ch0 <= j < ch1
// and the columns x0 <= x < x1, with g read from goff and v from voff on.
func corrBackwardCols(out []float32, ostride int, g []float32, goff, gstep int, v []float32, voff, vstep, vstride, kn, ch0, ch1, x0, x1 int, scale float32) {
	for j := ch0; j < ch1; j++ {
		for x := x0; x < x1; x++ {
			var s float32
			for k := 0; k < kn; k++ {
				s += g[goff+k*gstep+x] * v[voff+j*vstride+k*vstep+x]
			}
			out[j*ostride+x] = s * scale
		}
	}
}
