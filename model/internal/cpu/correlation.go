package cpu

import "fmt"

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
// before ParallelFor hands out the next: a few tens of microseconds of work,
// well above the cost of waking a second core.
const corrGrainMACs = 1 << 18

// Correlation writes into dst (shape (n, disps, h, w)) the correlation cost
// volume of left and right (both (n, c, h, w)) defined above; output
// channel k holds the match at a shift of k pixels. A disps larger than w
// gives all-zero channels k ≥ w. dst must not overlap left or right.
// Correlation does not allocate in steady state. It panics if a dimension
// or disps is not positive, or a slice length disagrees with the shape.
func Correlation(dst, left, right []float32, n, c, h, w, disps int) {
	corrCheck("Correlation", n, c, h, w, disps)
	opCheckLen("Correlation", "left", left, n*c*h*w)
	opCheckLen("Correlation", "right", right, n*c*h*w)
	opCheckLen("Correlation", "dst", dst, n*disps*h*w)
	t := corrStart(corrForwardRows)
	t.dst, t.left, t.right = dst, left, right
	corrRun(t, n, c, h, w, disps)
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
	corrRun(t, n, c, h, w, disps)
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

var corrFree = make(chan *corrTask, 16)

func corrStart(body func(t *corrTask, lo, hi int)) *corrTask {
	var t *corrTask
	select {
	case t = <-corrFree:
	default:
		t = new(corrTask)
		t.run = t.exec
	}
	t.body = body
	return t
}

// corrRun runs t.body over the rows (n, y), in ranges of about
// corrGrainMACs multiply-adds, and recycles t.
func corrRun(t *corrTask, n, c, h, w, disps int) {
	t.n, t.c, t.h, t.w, t.disps = n, c, h, w, disps
	rows := n * h
	grain := max(1, corrGrainMACs/(c*w*min(disps, w)))
	if grain >= rows {
		t.body(t, 0, rows)
	} else {
		ParallelFor(rows, grain, t.run)
	}
	run := t.run
	*t = corrTask{run: run}
	select {
	case corrFree <- t:
	default:
	}
}

// corrForwardRows computes the output rows (n, k, y) of the input rows
// lo <= r < hi, r = n·h + y.
func corrForwardRows(t *corrTask, lo, hi int) {
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	for r := lo; r < hi; r++ {
		b, y := r/h, r%h
		in := b*c*plane + y*w      // row y of channel 0 of item b
		out := b*disps*plane + y*w // row y of output channel 0
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
// lo <= r < hi.
func corrBackwardRows(t *corrTask, lo, hi int) {
	c, h, w, disps := t.c, t.h, t.w, t.disps
	plane := h * w
	scale := 1 / float32(c)
	kmax := min(disps, w)
	for r := lo; r < hi; r++ {
		b, y := r/h, r%h
		in := b*c*plane + y*w
		out := b*disps*plane + y*w
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
