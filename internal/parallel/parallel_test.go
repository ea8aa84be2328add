package parallel

import (
	"sync/atomic"
	"testing"
)

func TestForCoversRange(t *testing.T) {
	for _, tc := range []struct{ n, grain int }{
		{0, 1}, {1, 1}, {7, 3}, {100, 1}, {100, 0}, {1000, 7}, {5, 100},
	} {
		hits := make([]int32, tc.n)
		var calls atomic.Int32
		For(tc.n, tc.grain, func(lo, hi int) {
			calls.Add(1)
			if tc.grain > 0 && hi-lo > tc.grain {
				t.Errorf("n=%d grain=%d: range [%d,%d) longer than grain", tc.n, tc.grain, lo, hi)
			}
			for i := lo; i < hi; i++ {
				atomic.AddInt32(&hits[i], 1)
			}
		})
		for i, h := range hits {
			if h != 1 {
				t.Fatalf("n=%d grain=%d: index %d visited %d times, want 1", tc.n, tc.grain, i, h)
			}
		}
	}
}

func TestForNested(t *testing.T) {
	var sum atomic.Int64
	For(8, 1, func(lo, hi int) {
		For(8, 1, func(lo2, hi2 int) { sum.Add(int64(hi2 - lo2)) })
	})
	if got := sum.Load(); got != 64 {
		t.Fatalf("nested sum = %d, want 64", got)
	}
}

func TestForNoAlloc(t *testing.T) {
	var sum atomic.Int64
	fn := func(lo, hi int) { sum.Add(int64(hi - lo)) }
	For(64, 4, fn) // start the workers
	allocs := testing.AllocsPerRun(100, func() { For(64, 4, fn) })
	if allocs != 0 {
		t.Fatalf("For allocated %v times per call, want 0", allocs)
	}
}
