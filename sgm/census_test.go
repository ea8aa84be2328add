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

// The AVX-512 matching costs equal the portable ones, border strip and
// unused levels included.
func TestCostRowKernels(t *testing.T) {
	if !hasAVX512 {
		t.Skip("no AVX-512 VPOPCNTQ kernel on this machine or build")
	}
	r := rand.New(rand.NewPCG(12, 13))
	for _, c := range []struct{ w, lo, n, np int }{{40, 0, 16, 16}, {37, 3, 20, 32}, {100, 0, 48, 48}, {90, 10, 63, 64}, {20, 0, 80, 80}, {12, 11, 5, 16}} {
		cl, cr := make([]uint64, c.w), make([]uint64, c.w)
		for i := range cl {
			cl[i], cr[i] = r.Uint64(), r.Uint64()
		}
		want := make([]uint8, c.w*c.np)
		got := make([]uint8, c.w*c.np)
		costRowGeneric(want, cl, cr, c.w, c.lo, c.n, c.np, 62)
		costRow(got, cl, cr, c.w, c.lo, c.n, c.np, 62, make([]uint64, 2*c.w+c.np))
		if !slices.Equal(got, want) {
			t.Errorf("%+v: AVX-512 costs differ from the portable ones", c)
		}
	}
}
