package cpu

import "fmt"

// Concat writes into dst the NCHW tensors srcs stacked along the channel
// axis: srcs[i] has shape (n, chans[i], h, w) and dst has shape
// (n, Σchans, h, w), with the channels of srcs[0] first. dst must not
// overlap any source. Concat does not allocate in steady state; slice
// literals for srcs and chans at the call site stay on the caller's stack.
// It panics if len(srcs) != len(chans), there are no sources, a dimension
// or channel count is not positive, or a length disagrees with the shapes.
func Concat(dst []float32, srcs [][]float32, chans []int, n, h, w int) {
	Procs(0).Concat(dst, srcs, chans, n, h, w)
}

// Concat is the package function Concat on at most p goroutines.
func (p Procs) Concat(dst []float32, srcs [][]float32, chans []int, n, h, w int) {
	total := concatCheck("Concat", srcs, chans, n, h, w, false)
	opCheckLen("Concat", "dst", dst, n*total*h*w)
	concatRun(int(p), concatCopies, dst, srcs, chans, total, n, h, w)
}

// ConcatBackward splits the gradient ddst of Concat's output into the
// gradients dsrcs of its inputs, with the same chans: dsrcs[i] receives the
// channels of ddst that srcs[i] supplied. It overwrites every dsrcs[i]; a
// nil dsrcs[i] is skipped (that input needs no gradient). No dsrcs[i] may
// overlap ddst. ConcatBackward does not allocate in steady state. It panics
// like Concat, except that nil gradients are allowed.
func ConcatBackward(dsrcs [][]float32, ddst []float32, chans []int, n, h, w int) {
	Procs(0).ConcatBackward(dsrcs, ddst, chans, n, h, w)
}

// ConcatBackward is the package function ConcatBackward on at most p goroutines.
func (p Procs) ConcatBackward(dsrcs [][]float32, ddst []float32, chans []int, n, h, w int) {
	total := concatCheck("ConcatBackward", dsrcs, chans, n, h, w, true)
	opCheckLen("ConcatBackward", "ddst", ddst, n*total*h*w)
	concatRun(int(p), concatSplits, ddst, dsrcs, chans, total, n, h, w)
}

// concatGroup is the number of parts one task carries; longer lists run
// in several passes.
const concatGroup = 8

// concatRun runs body over the parts, concatGroup at a time. joined is the
// concatenated tensor, with total channels.
func concatRun(procs int, body func(*opTask, int, int), joined []float32, parts [][]float32, chans []int, total, n, h, w int) {
	off := 0
	for len(parts) > 0 {
		k := min(len(parts), concatGroup)
		t := opStart(body)
		t.dst, t.c, t.h, t.w, t.off, t.nparts, t.procs = joined, total, h, w, off, k, procs
		size := 0
		for i := 0; i < k; i++ {
			t.parts[i], t.chans[i] = parts[i], chans[i]
			off += chans[i]
			size += chans[i]
		}
		opRun(t, n*k, 8*size*h*w/k)
		parts, chans = parts[k:], chans[k:]
	}
}

// concatCheck validates the parts of a concatenation and returns the total
// channel count. A nil part is accepted if nilOK.
func concatCheck(fn string, parts [][]float32, chans []int, n, h, w int, nilOK bool) int {
	if len(parts) != len(chans) || len(parts) == 0 {
		panic(fmt.Sprintf("cpu.%s: %d tensors and %d channel counts", fn, len(parts), len(chans)))
	}
	total := 0
	for i, c := range chans {
		opCheckShape(fn, n, c, h, w)
		if (parts[i] != nil || !nilOK) && len(parts[i]) != n*c*h*w {
			panic(fmt.Sprintf("cpu.%s: tensor %d has %d values, want %d", fn, i, len(parts[i]), n*c*h*w))
		}
		total += c
	}
	return total
}

// concatUnit locates unit u of a task: part i of batch item, its channel
// count c, its values in the part and in the joined tensor.
func concatUnit(t *opTask, u int) (i int, part, joined []float32) {
	hw := t.h * t.w
	item := u / t.nparts
	i = u % t.nparts
	off := t.off
	for _, c := range t.chans[:i] {
		off += c
	}
	c := t.chans[i]
	base := (item*t.c + off) * hw
	if t.parts[i] == nil {
		return i, nil, nil
	}
	return i, t.parts[i][item*c*hw : (item+1)*c*hw], t.dst[base : base+c*hw]
}

// concatCopies copies units lo <= u < hi into the joined tensor.
func concatCopies(t *opTask, lo, hi int) {
	for u := lo; u < hi; u++ {
		_, part, joined := concatUnit(t, u)
		copy(joined, part)
	}
}

// concatSplits copies units lo <= u < hi out of the joined tensor.
func concatSplits(t *opTask, lo, hi int) {
	for u := lo; u < hi; u++ {
		_, part, joined := concatUnit(t, u)
		copy(part, joined)
	}
}
