//go:build purego || !amd64

package cpu

// blocksAVX2 is false where pool_amd64.s is not built.
var blocksAVX2 = false

func sumBlocks2x2AVX2(g, r0, r1 []float32, scale float32) {
	panic("cpu: sumBlocks2x2AVX2 without amd64 assembly")
}

func spreadBlocks2x2AVX2(r0, r1, v []float32, scale float32) {
	panic("cpu: spreadBlocks2x2AVX2 without amd64 assembly")
}
