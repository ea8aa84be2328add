package cpu

// The 2×2 block loops behind nearest-neighbour upsampling (upsample.go):
// the forward spreads each value over its block, the backward sums each
// block.

// sumBlocks2x2 writes into g[j] the sum of the block r0[2j], r0[2j+1],
// r1[2j], r1[2j+1], added in that order (PyTorch's, so the mean agrees to
// the last bit), times scale. The rows need at least 2·len(g) values.
func sumBlocks2x2(g, r0, r1 []float32, scale float32) {
	if blocksAVX2 {
		k := len(g) &^ 7
		sumBlocks2x2AVX2(g[:k], r0[:2*k], r1[:2*k], scale)
		g, r0, r1 = g[k:], r0[2*k:], r1[2*k:]
	}
	for len(g) > 0 && len(r0) > 1 && len(r1) > 1 {
		g[0] = (((r0[0] + r0[1]) + r1[0]) + r1[1]) * scale
		g, r0, r1 = g[1:], r0[2:], r1[2:]
	}
}

// spreadBlocks2x2 writes scale·v[j] into the block r0[2j], r0[2j+1],
// r1[2j], r1[2j+1] for every j. The rows need at least 2·len(v) values.
func spreadBlocks2x2(r0, r1, v []float32, scale float32) {
	if blocksAVX2 {
		k := len(v) &^ 7
		spreadBlocks2x2AVX2(r0[:2*k], r1[:2*k], v[:k], scale)
		r0, r1, v = r0[2*k:], r1[2*k:], v[k:]
	}
	for len(v) > 0 && len(r0) > 1 && len(r1) > 1 {
		x := scale * v[0]
		r0[0], r0[1], r1[0], r1[1] = x, x, x, x
		r0, r1, v = r0[2:], r1[2:], v[1:]
	}
}
