//go:build purego || !amd64

package cpu

// upsampleAVX2 is false where upsample_amd64.s is not built.
var upsampleAVX2 = false

func upBilinearRowAVX2(out, a, b []float32) {
	panic("cpu: upBilinearRowAVX2 without amd64 assembly")
}

func upBilinearBackRowAVX2(g, r0, r1, ru, rd []float32) {
	panic("cpu: upBilinearBackRowAVX2 without amd64 assembly")
}
