package sgm

import (
	"runtime"
	"sync"
	"sync/atomic"
)

// parallelFor calls fn(lo, hi) for consecutive ranges of grain items
// covering [0, n), on up to GOMAXPROCS goroutines, and returns when all are
// done. Any range may run on any goroutine; the ranges depend on n and grain
// only. Steady-state calls do not allocate if fn is built once.
func parallelFor(n, grain int, fn func(lo, hi int)) {
	if n <= 0 {
		return
	}
	if grain < 1 {
		grain = 1
	}
	procs := runtime.GOMAXPROCS(0)
	chunks := (n + grain - 1) / grain
	if procs == 1 || chunks == 1 {
		for lo := 0; lo < n; lo += grain {
			fn(lo, min(lo+grain, n))
		}
		return
	}
	helpers.grow(procs - 1)
	t := getTask()
	t.fn, t.n, t.grain = fn, n, grain
	t.next.Store(0)
	for range min(procs, chunks) - 1 {
		t.wg.Add(1)
		select {
		case helpers.tasks <- t:
			continue
		default:
			t.wg.Done()
		}
		break // every helper is busy: this goroutine does the rest
	}
	t.run()
	t.wg.Wait()
	t.fn = nil
	putTask(t)
}

// task is one parallelFor call shared by the goroutines working on it.
type task struct {
	fn       func(lo, hi int)
	n, grain int
	next     atomic.Int64
	wg       sync.WaitGroup
}

func (t *task) run() {
	for {
		lo := int(t.next.Add(int64(t.grain))) - t.grain
		if lo >= t.n {
			return
		}
		t.fn(lo, min(lo+t.grain, t.n))
	}
}

// freeTasks recycles tasks; unlike sync.Pool a channel keeps them, also
// under the race detector.
var freeTasks = make(chan *task, 64)

func getTask() *task {
	select {
	case t := <-freeTasks:
		return t
	default:
		return new(task)
	}
}

func putTask(t *task) {
	select {
	case freeTasks <- t:
	default:
	}
}

// helperPool holds the goroutines that help parallelFor; they live for the
// life of the process, as many as GOMAXPROCS − 1 has ever been.
type helperPool struct {
	mu    sync.Mutex
	n     int
	tasks chan *task
}

var helpers = helperPool{tasks: make(chan *task)}

func (p *helperPool) grow(n int) {
	p.mu.Lock()
	defer p.mu.Unlock()
	for ; p.n < n; p.n++ {
		go func() {
			for t := range p.tasks {
				t.run()
				t.wg.Done()
			}
		}()
	}
}
