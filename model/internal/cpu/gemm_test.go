package cpu

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// naiveGemm is the obviously-correct triple loop, in float64.
func naiveGemm(transA, transB bool, m, n, k int, a []float32, lda int, b []float32, ldb int, c []float32, ldc int, accumulate bool) {
	for i := range m {
		for j := range n {
			var s float64
			for p := range k {
				var av, bv float32
				if transA {
					av = a[p*lda+i]
				} else {
					av = a[i*lda+p]
				}
				if transB {
					bv = b[j*ldb+p]
				} else {
					bv = b[p*ldb+j]
				}
				s += float64(av) * float64(bv)
			}
			if accumulate {
				s += float64(c[i*ldc+j])
			}
			c[i*ldc+j] = float32(s)
		}
	}
}

func randSlice(rng *rand.Rand, n int) []float32 {
	x := make([]float32, n)
	for i := range x {
		x[i] = float32(rng.Float64()*2 - 1)
	}
	return x
}

// forEachKernel runs f once per micro-kernel this machine can run.
func forEachKernel(t *testing.T, f func(t *testing.T)) {
	saved := kern
	defer func() { kern = saved }()
	for _, k := range availableKernels() {
		kern = k
		t.Run(k.name, f)
	}
}

func TestSgemmAgainstNaive(t *testing.T) {
	forEachKernel(t, func(t *testing.T) {
		rng := rand.New(rand.NewPCG(1, 2))
		sizes := [][3]int{{1, 1, 1}, {3, 5, 7}, {8, 48, 16}, {17, 33, 9}, {64, 100, 300}, {130, 97, 513}, {5, 1000, 3}, {200, 7, 600}, {70, 700, 600}}
		for _, s := range sizes {
			m, n, k := s[0], s[1], s[2]
			for _, ta := range []bool{false, true} {
				for _, tb := range []bool{false, true} {
					for _, accum := range []bool{false, true} {
						name := fmt.Sprintf("%dx%dx%d/tA=%v/tB=%v/acc=%v", m, n, k, ta, tb, accum)
						lda, ldb, ldc := k+3, n+1, n+5
						arows, brows := m, k
						if ta {
							lda, arows = m+2, k
						}
						if tb {
							ldb, brows = k+4, n
						}
						a := randSlice(rng, arows*lda)
						b := randSlice(rng, brows*ldb)
						c := randSlice(rng, m*ldc)
						want := append([]float32(nil), c...)
						naiveGemm(ta, tb, m, n, k, a, lda, b, ldb, want, ldc, accum)
						Sgemm(ta, tb, m, n, k, a, lda, b, ldb, c, ldc, accum)
						// Tolerance: float32 sums of k products of values in [-1, 1]
						// against a float64 reference (common practice: a few ulps
						// times sqrt(k)).
						tol := 1e-6 * float64(k+8)
						for i := range m {
							for j := range n {
								g, w := c[i*ldc+j], want[i*ldc+j]
								if math.Abs(float64(g-w)) > tol {
									t.Fatalf("%s: C[%d,%d] = %v, naive loop gives %v", name, i, j, g, w)
								}
							}
							// Padding between rows must be untouched.
							for j := n; j < ldc && i*ldc+j < len(c); j++ {
								if c[i*ldc+j] != want[i*ldc+j] {
									t.Fatalf("%s: wrote padding C[%d,%d]", name, i, j)
								}
							}
						}
					}
				}
			}
		}
	})
}

func TestSgemmPanicsOnShortSlice(t *testing.T) {
	defer func() {
		if recover() == nil {
			t.Fatal("Sgemm with a short C did not panic")
		}
	}()
	a := make([]float32, 4)
	Sgemm(false, false, 2, 2, 2, a, 2, a, 2, make([]float32, 3), 2, false)
}

func TestSgemmNoAlloc(t *testing.T) {
	m, n, k := 64, 200, 100
	a, b, c := make([]float32, m*k), make([]float32, k*n), make([]float32, m*n)
	Sgemm(false, false, m, n, k, a, k, b, n, c, n, false)
	allocs := testing.AllocsPerRun(20, func() { Sgemm(false, false, m, n, k, a, k, b, n, c, n, false) })
	if allocs != 0 {
		t.Fatalf("Sgemm allocated %v times per call, want 0", allocs)
	}
}
