package sgm

// winnersGeneric finds, for each of the w pixels of a row of summed costs
// (pixel x's levels at sum[x·np:], n of them used), the first level of the
// smallest sum (best[x]), that sum (bestV[x]) and the smallest sum more
// than one level away from it (second[x], noPath if there is none).
func winnersGeneric(sum []uint16, np, n, w int, best []int32, bestV, second []uint16) {
	for x := range w {
		v := sum[x*np : x*np+n]
		bd, bv := 0, v[0]
		for d, s := range v {
			if s < bv {
				bd, bv = d, s
			}
		}
		sec := uint16(noPath)
		for d, s := range v {
			if (d < bd-1 || d > bd+1) && s < sec {
				sec = s
			}
		}
		best[x], bestV[x], second[x] = int32(bd), bv, sec
	}
}

// rightWinnersGeneric finds, for each pixel xr of the right view's row, the
// level d minimising the summed cost of left pixel xr+lo+d at level d (the
// first on ties), or −1 if no left pixel sees xr.
func rightWinnersGeneric(sum []uint16, np, n, w, lo int, rarg []int32) {
	for i := range rarg[:w] {
		rarg[i] = -1
	}
	for xr := range w {
		best := uint32(noPath + 1)
		for d := 0; d < n && xr+lo+d < w; d++ {
			if s := uint32(sum[(xr+lo+d)*np+d]); s < best {
				best, rarg[xr] = s, int32(d)
			}
		}
	}
}
