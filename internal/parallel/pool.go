package parallel

import "context"

// Pool is a bounded set of reusable workers of one kind (a worker holds the
// scratch memory of one call): at most n exist at once, made on demand.
// Its methods are safe for concurrent use.
type Pool[T any] struct {
	idle   chan *T
	tokens chan struct{} // one per worker that may still be made
}

// NewPool returns a pool of at most n workers, none made yet. n must be
// at least 1.
func NewPool[T any](n int) *Pool[T] {
	p := &Pool[T]{idle: make(chan *T, n), tokens: make(chan struct{}, n)}
	for range n {
		p.tokens <- struct{}{}
	}
	return p
}

// Get returns an idle worker; else, while fewer than n exist, a new one
// from newWorker; else it waits for a worker to come back, or for ctx to
// end, and then returns ctx.Err(). An idle worker is preferred to a new
// one, so a pool makes only as many workers as calls overlap.
func (p *Pool[T]) Get(ctx context.Context, newWorker func() *T) (*T, error) {
	if w, ok := p.TryGet(); ok {
		return w, nil
	}
	select {
	case w := <-p.idle:
		return w, nil
	case <-p.tokens:
		return newWorker(), nil
	case <-ctx.Done():
		return nil, ctx.Err()
	}
}

// TryGet returns an idle worker, without waiting or making one; false
// when none is idle.
func (p *Pool[T]) TryGet() (*T, bool) {
	select {
	case w := <-p.idle:
		return w, true
	default:
		return nil, false
	}
}

// Put returns w, from Get or Add, to the idle workers.
func (p *Pool[T]) Put(w *T) { p.idle <- w }

// Add counts w, made outside Get, as one of the pool's workers and puts it
// with the idle ones. It reports false, and leaves w out, when n workers
// already exist.
func (p *Pool[T]) Add(w *T) bool {
	select {
	case <-p.tokens:
		p.idle <- w
		return true
	default:
		return false
	}
}
