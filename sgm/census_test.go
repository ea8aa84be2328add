package sgm

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// The AVX2 census comparison gives the portable one's bytes, tails
// included.
func TestDarkerKernels(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 9))
	for _, n := range []int{1, 31, 32, 33, 64, 100, 370} {
		acc := make([]uint8, n)
		nb, cb := make([]uint8, n), make([]uint8, n)
		for i := range n {
			acc[i], nb[i], cb[i] = uint8(r.IntN(256)), uint8(r.IntN(256)), uint8(r.IntN(256))
			if i%7 == 0 {
				nb[i] = cb[i]
			}
		}
		want := slices.Clone(acc)
		darkerGeneric(want, nb, cb)
		for _, avx := range []bool{true, false} {
			useAVX2 = avx
			got := slices.Clone(acc)
			darker(got, nb, cb)
			if !slices.Equal(got, want) {
				t.Errorf("n %d, AVX2 %v: darker %v, portable %v", n, avx, got[:min(n, 8)], want[:min(n, 8)])
			}
		}
		useAVX2 = hasAVX2
	}
}
