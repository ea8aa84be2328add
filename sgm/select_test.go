package sgm

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// The AVX2 and AVX-512 winner searches give the portable ones' results on
// random sums with many ties, for several level counts and offsets.
func TestWinnersKernels(t *testing.T) {
	if !hasAVX2 {
		t.Skip("no AVX2 kernel on this machine or build")
	}
	r := rand.New(rand.NewPCG(10, 11))
	for _, c := range []struct{ np, n, w, lo int }{{16, 16, 40, 0}, {16, 5, 30, 3}, {48, 48, 100, 0}, {64, 49, 77, 10}, {80, 80, 200, 5}, {16, 1, 20, 0}, {32, 3, 25, 0}, {48, 40, 30, 35}, {96, 81, 20, 0}, {96, 96, 20, 0}, {64, 64, 33, 2}, {32, 17, 9, 0}} {
		sum := make([]uint16, c.w*c.np)
		for i := range sum {
			sum[i] = uint16(r.IntN(40)) // small range: many ties
		}
		bg, vg, sg := make([]int32, c.w), make([]uint16, c.w), make([]uint16, c.w)
		winnersGeneric(sum, c.np, c.n, c.w, bg, vg, sg)
		for _, wide := range []bool{false, true} { // the AVX2 kernel, then the AVX-512 one where there is one
			useAVX512BW = wide && hasAVX512BW
			ba, va, sa := make([]int32, c.w), make([]uint16, c.w), make([]uint16, c.w)
			winners(sum, c.np, c.n, c.w, ba, va, sa)
			if !slices.Equal(bg, ba) || !slices.Equal(vg, va) || !slices.Equal(sg, sa) {
				t.Errorf("%+v, AVX-512 %v: winners differ:\nbest %v\nwant %v\nsecond %v\nwant %v", c, useAVX512BW, ba[:8], bg[:8], sa[:8], sg[:8])
			}
		}
		useAVX512BW = hasAVX512BW
		rg, ra := make([]int32, c.w), make([]int32, c.w)
		rightWinnersGeneric(sum, c.np, c.n, c.w, c.lo, rg)
		rightWinners(sum, c.np, c.n, c.w, c.lo, ra, make([]uint16, c.np+vecPad), make([]uint16, c.np+vecPad))
		if !slices.Equal(rg, ra) {
			t.Errorf("%+v: right winners differ:\n%v\nwant\n%v", c, ra, rg)
		}
	}
}
