package parallel

// FreeList holds idle values of one kind (the state of a call, shared by
// the goroutines that work on it) for reuse. A buffered channel rather than
// a sync.Pool: it keeps its values across garbage collections and under the
// race detector, so steady-state calls never allocate. Make one with
// make(FreeList[T], capacity); beyond its capacity, values are dropped.
type FreeList[T any] chan *T

// Get returns an idle value, or a new zero one on which init (if not nil)
// has run, e.g. to bind a method value once.
func (f FreeList[T]) Get(init func(*T)) *T {
	select {
	case v := <-f:
		return v
	default:
		v := new(T)
		if init != nil {
			init(v)
		}
		return v
	}
}

// Put returns v to f; when f is full, v is dropped. The caller clears what
// v must not keep alive (references to its caller's buffers).
func (f FreeList[T]) Put(v *T) {
	select {
	case f <- v:
	default:
	}
}
