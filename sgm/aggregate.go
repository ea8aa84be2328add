package sgm

// Cost aggregation along one path (Hirschmüller, "Stereo processing by
// semiglobal matching and mutual information", IEEE TPAMI 30(2), 2008,
// eq. 13): for the pixel p after p−r on the path,
//
//	L(p, d) = C(p, d) + min(L(p−r, d), L(p−r, d±1) + P1, min_k L(p−r, k) + P2) − min_k L(p−r, k)
//
// Each L vector has one sentinel slot on each side (index 0 and D+1, set to
// noPath) so that d±1 needs no test; its values sit at 1 … D.

// noPath is the sentinel beside each path vector; saturating arithmetic
// keeps it out of every minimum.
const noPath = 0xffff

// pathStart sets cur (D+2 slots) to the costs, adds them to sum and returns
// their minimum: the first pixel of a path.
func pathStart(cur []uint16, cost []uint8, sum []uint16) uint16 {
	cur = cur[:len(cost)+2]
	sum = sum[:len(cost)]
	cur[0], cur[len(cost)+1] = noPath, noPath
	m := uint16(noPath)
	for d, c := range cost {
		v := uint16(c)
		cur[d+1] = v
		sum[d] += v
		m = min(m, v)
	}
	return m
}

// pathStep computes cur from prev (both D+2 slots) and the costs, adds cur's
// values to sum and returns their minimum. prevMin is prev's minimum and p2
// the large-jump penalty at this step.
func pathStepGeneric(cur, prev []uint16, cost []uint8, sum []uint16, p1, p2, prevMin uint16) uint16 {
	n := len(cost)
	cur = cur[:n+2]
	prev = prev[:n+2]
	sum = sum[:n]
	cur[0], cur[n+1] = noPath, noPath
	jump := uint32(prevMin) + uint32(p2)
	m := uint32(noPath)
	for d, c := range cost {
		v := min(uint32(prev[d+1]), uint32(prev[d])+uint32(p1), uint32(prev[d+2])+uint32(p1), jump)
		v += uint32(c) - uint32(prevMin)
		cur[d+1] = uint16(v)
		sum[d] += uint16(v)
		m = min(m, v)
	}
	return uint16(m)
}
