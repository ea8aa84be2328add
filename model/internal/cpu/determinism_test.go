package cpu

import (
	"math/rand/v2"
	"runtime"
	"testing"
)

// TestSgemmGOMAXPROCS checks that Sgemm gives the same bits on any number
// of threads: its column stripes follow GOMAXPROCS, but each value of C is
// one sum over k in a fixed order. The sizes take k over several passes
// (k > blockK), A packed once for all stripes (n > blockN) and edge tiles
// in both directions, with and without accumulation.
func TestSgemmGOMAXPROCS(t *testing.T) {
	forEachKernel(t, func(t *testing.T) {
		rng := rand.New(rand.NewPCG(4, 4))
		for _, s := range [][3]int{{37, 1003, 601}, {130, 250, 700}, {9, 61, 300}} {
			m, n, k := s[0], s[1], s[2]
			a, b, c0 := randSlice(rng, m*k), randSlice(rng, k*n), randSlice(rng, m*n)
			for _, acc := range []bool{false, true} {
				run := func() []float32 {
					c := append([]float32(nil), c0...)
					Sgemm(false, false, m, n, k, a, k, b, n, c, n, acc)
					return c
				}
				old := runtime.GOMAXPROCS(1)
				want := run()
				for _, procs := range []int{2, 3, 5} {
					runtime.GOMAXPROCS(procs)
					for rep := range 3 {
						if i := firstDiff(run(), want); i >= 0 {
							t.Errorf("%dx%dx%d acc=%v GOMAXPROCS=%d run %d: C[%d] differs from the single-threaded result", m, n, k, acc, procs, rep, i)
						}
					}
				}
				runtime.GOMAXPROCS(old)
			}
		}
	})
}

// TestBiasBackwardGOMAXPROCS checks BiasBackward the same way; its
// channels are summed whole, one per range.
func TestBiasBackwardGOMAXPROCS(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	const n, c, h, w = 3, 40, 33, 70
	dy := randSlice(rng, n*c*h*w)
	db := make([]float32, c)
	old := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(old)
	BiasBackward(db, dy, n, c, h, w)
	want := append([]float32(nil), db...)
	for _, procs := range []int{2, 3, 5} {
		runtime.GOMAXPROCS(procs)
		for rep := range 3 {
			BiasBackward(db, dy, n, c, h, w)
			if i := firstDiff(db, want); i >= 0 {
				t.Errorf("GOMAXPROCS=%d run %d: dbias[%d] differs from the single-threaded result", procs, rep, i)
			}
		}
	}
}
