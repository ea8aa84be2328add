package parallel

import (
	"runtime"
	"sync/atomic"
	"testing"
	"time"
)

// TestForNBound: with GOMAXPROCS 4, ranges that sleep run on up to 4
// goroutines under For, on 1 under ForN(1) and on at most 2 under ForN(2);
// every range runs once in each case (the pool's workers started first,
// so that they are idle when the unbounded call looks for them).
func TestForNBound(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(4))
	peak := func(maxProcs int) (int32, int) {
		var now, most atomic.Int32
		var ran atomic.Int64
		ForN(maxProcs, 32, 1, func(lo, hi int) {
			n := now.Add(1)
			for m := most.Load(); n > m && !most.CompareAndSwap(m, n); m = most.Load() {
			}
			time.Sleep(2 * time.Millisecond)
			ran.Add(int64(hi - lo))
			now.Add(-1)
		})
		return most.Load(), int(ran.Load())
	}
	peak(0) // start the pool's workers
	time.Sleep(10 * time.Millisecond)
	for _, c := range []struct {
		maxProcs  int
		atMost    int32
		atLeastUp int32 // the unbounded case must exceed the bounds tested
	}{{1, 1, 0}, {2, 2, 0}, {0, 4, 3}} {
		got, ran := peak(c.maxProcs)
		for try := 0; try < 5 && got < c.atLeastUp; try++ { // a loaded machine may not have parked the workers yet
			time.Sleep(20 * time.Millisecond)
			got, ran = peak(c.maxProcs)
		}
		if ran != 32 || got > c.atMost || got < c.atLeastUp {
			t.Errorf("ForN(%d): %d ranges run, %d at once; want 32, at most %d and at least %d", c.maxProcs, ran, got, c.atMost, c.atLeastUp)
		}
	}
}
