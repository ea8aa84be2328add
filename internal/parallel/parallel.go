package parallel

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// For calls fn on consecutive, disjoint ranges [lo, hi) that cover
// [0, n), each grain long except possibly the last, spread over up to
// runtime.GOMAXPROCS(0) goroutines: the caller's and idle ones from a
// persistent worker pool. It returns when every call has returned. A grain
// of 0 or less means ceil(n / GOMAXPROCS). Ranges are handed out in
// increasing order of lo but may run concurrently and finish in any order,
// so fn must only write data owned by its range. Which goroutine runs a
// range changes from call to call: a kernel that adds partial sums must
// keep one per range (or per fixed group of ranges) and add them in range
// order, never one per goroutine, and must derive its ranges from the
// problem's size rather than from GOMAXPROCS, so that its float results
// are the same bits on any number of threads.
//
// For may be called from inside fn: when no worker is idle the
// caller runs the ranges itself, so nesting never deadlocks.
//
// For itself does not allocate in steady state. A closure passed as
// fn escapes to the heap, so a caller that must not allocate per call should
// build fn once (for example store it in a plan) instead of writing a
// literal at the call site. fn must not panic.
func For(n, grain int, fn func(lo, hi int)) { ForN(0, n, grain, fn) }

// ForN is For on at most maxProcs goroutines (the caller's included), or
// on GOMAXPROCS of them if that is fewer or maxProcs is 0 or less: a
// component that must leave cores to others (online adaptation beside
// inference) caps its kernels with it. Results do not change, by the rule
// above.
func ForN(maxProcs, n, grain int, fn func(lo, hi int)) {
	if n <= 0 {
		return
	}
	procs := runtime.GOMAXPROCS(0)
	if maxProcs > 0 {
		procs = min(procs, maxProcs)
	}
	if grain <= 0 {
		grain = (n + procs - 1) / procs
	}
	chunks := (n + grain - 1) / grain
	if chunks == 1 || procs == 1 {
		for lo := 0; lo < n; lo += grain {
			runRange(fn, lo, min(lo+grain, n))
		}
		return
	}
	helpers := min(procs, chunks) - 1
	thePool.grow(procs - 1)

	j := freeJobs.Get(nil)
	j.fn, j.n, j.grain = fn, n, grain
	j.next.Store(0)
	for range helpers {
		j.wg.Add(1)
		select {
		case thePool.jobs <- j:
			continue
		default:
			j.wg.Done()
		}
		break // no idle worker: the caller does the rest
	}
	j.run()
	j.wg.Wait()
	j.fn = nil
	freeJobs.Put(j)
}

// job is one For call shared by the goroutines that work on it.
type job struct {
	fn       func(lo, hi int)
	n, grain int
	next     atomic.Int64
	wg       sync.WaitGroup
}

// run takes ranges until none is left.
func (j *job) run() {
	for {
		lo := int(j.next.Add(int64(j.grain))) - j.grain
		if lo >= j.n {
			return
		}
		runRange(j.fn, lo, min(lo+j.grain, j.n))
	}
}

// runRange calls fn(lo, hi), counted if PeakRanges is watching.
func runRange(fn func(lo, hi int), lo, hi int) {
	c := watching.Load()
	if c == nil {
		fn(lo, hi)
		return
	}
	n := c.now.Add(1)
	for m := c.peak.Load(); n > m && !c.peak.CompareAndSwap(m, n); m = c.peak.Load() {
	}
	fn(lo, hi)
	c.now.Add(-1)
}

// rangeCount is the state of one PeakRanges call.
type rangeCount struct{ now, peak atomic.Int32 }

var watching atomic.Pointer[rangeCount]

// PeakRanges runs f and returns the largest number of ranges of For and
// ForN calls, from any goroutine, that ran at once meanwhile: tests of
// the components that bound their goroutines with ForN check the bound
// with it. Nested calls count a range inside a range twice. Calls of
// PeakRanges must not overlap.
func PeakRanges(f func()) int {
	c := new(rangeCount)
	watching.Store(c)
	defer watching.Store(nil)
	f()
	return int(c.peak.Load())
}

var freeJobs = make(FreeList[job], 64)

// pool is the set of persistent worker goroutines. Jobs go over an
// unbuffered channel, so a send succeeds only when a worker is idle.
type pool struct {
	jobs    chan *job
	mu      sync.Mutex
	workers atomic.Int32
}

var thePool = pool{jobs: make(chan *job)}

// grow starts workers until there are at least n.
func (p *pool) grow(n int) {
	if int(p.workers.Load()) >= n {
		return
	}
	p.mu.Lock()
	for int(p.workers.Load()) < n {
		p.workers.Add(1)
		go p.work()
	}
	p.mu.Unlock()
}

func (p *pool) work() {
	for j := range p.jobs {
		j.run()
		j.wg.Done()
	}
}
