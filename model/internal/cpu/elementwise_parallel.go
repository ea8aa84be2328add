package cpu

import (
	"fmt"

	"github.com/parallaxdepth/parallax/internal/parallel"
)

// opGrainBytes is the amount of memory one range of a memory-bound operator
// touches (read plus written) before parallel.For hands out the next range.
// Smaller tensors run on the caller's goroutine: starting a second core
// costs a few microseconds, about what one core needs to stream this much.
const opGrainBytes = 256 << 10

// opTask carries the arguments of one operator call to the ranges that
// parallel.For hands out. Tasks are recycled and their run method value is
// bound once, at creation, so a call does not allocate in steady state
// (a closure literal passed to parallel.For would escape to the heap).
type opTask struct {
	dst, a, b  []float32
	parts      [concatGroup][]float32 // copied, so the caller's slice stays on its stack
	chans      [concatGroup]int
	nparts     int
	off        int
	s, t       float32
	n, c, h, w int
	procs      int // at most this many goroutines (Procs); 0: GOMAXPROCS
	body       func(t *opTask, lo, hi int)
	run        func(lo, hi int)
}

func (t *opTask) exec(lo, hi int) { t.body(t, lo, hi) }

// opFree holds idle tasks: more than calls can be in flight in practice.
var opFree = make(parallel.FreeList[opTask], 64)

// opStart returns a cleared task that will run body.
func opStart(body func(t *opTask, lo, hi int)) *opTask {
	t := opFree.Get(func(t *opTask) { t.run = t.exec }) // bound once in a task's life
	t.body = body
	return t
}

// elements returns dst, a and b (nil if b is) over the elements [lo, hi).
func (t *opTask) elements(lo, hi int) (dst, a, b []float32) {
	if t.b != nil {
		b = t.b[lo:hi]
	}
	return t.dst[lo:hi], t.a[lo:hi], b
}

// opRun runs t.body over the units [0, units), grain units per range, and
// returns t to the pool. A unit is whatever the body iterates over (an
// element, a row, a plane); unitBytes is the memory one unit touches and
// sets the grain.
func opRun(t *opTask, units, unitBytes int) {
	procs := t.procs
	grain := units
	if unitBytes > 0 {
		grain = max(1, opGrainBytes/unitBytes)
	}
	parallel.ForN(procs, units, grain, t.run)
	*t = opTask{run: t.run} // drop the references to the caller's slices
	opFree.Put(t)
}

// opElementwise runs body over the elements of dst, with a, b and the
// scalars s and u in the task; unitBytes is the memory one element touches.
// It panics, naming fn, unless a (named aName) and b (named bName; a unary
// operator gives "" and nil) are as long as dst.
func opElementwise(procs int, fn string, body func(t *opTask, lo, hi int), dst []float32, aName string, a []float32, bName string, b []float32, s, u float32, unitBytes int) {
	opCheckLen(fn, aName, a, len(dst))
	if bName != "" {
		opCheckLen(fn, bName, b, len(dst))
	}
	t := opStart(body)
	t.dst, t.a, t.b, t.s, t.t, t.procs = dst, a, b, s, u, procs
	opRun(t, len(dst), unitBytes)
}

// upsample2x runs body over the n·c·h input rows of a 2× upsampling
// between a tensor of shape (n, c, h, w) and one of shape (n, c, 2h, 2w):
// forward writes the large one, dst, from src; otherwise the gradient dst
// (small, "dsrc") from src (large, "ddst"). It panics, naming fn, if a
// dimension is not positive or a length disagrees with the shape.
func upsample2x(procs int, fn string, body func(t *opTask, lo, hi int), dst, src []float32, forward bool, n, c, h, w int) {
	opCheckShape(fn, n, c, h, w)
	small, large, smallName, largeName := src, dst, "src", "dst"
	if !forward {
		small, large, smallName, largeName = dst, src, "dsrc", "ddst"
	}
	opCheckLen(fn, smallName, small, n*c*h*w)
	opCheckLen(fn, largeName, large, 4*n*c*h*w)
	t := opStart(body)
	t.dst, t.a, t.h, t.w, t.procs = dst, src, h, w, procs
	opRun(t, n*c*h, 20*w)
}

// opCheckShape panics unless every dimension is positive.
func opCheckShape(fn string, n, c, h, w int) {
	if n <= 0 || c <= 0 || h <= 0 || w <= 0 {
		panic(fmt.Sprintf("cpu.%s: invalid shape %dx%dx%dx%d", fn, n, c, h, w))
	}
}

// opCheckLen panics unless len(s) == want.
func opCheckLen(fn, what string, s []float32, want int) {
	if len(s) != want {
		panic(fmt.Sprintf("cpu.%s: %s has %d values, want %d", fn, what, len(s), want))
	}
}
