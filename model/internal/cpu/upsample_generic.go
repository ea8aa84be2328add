//go:build purego || !amd64

package cpu

// upsampleAVX2 is false where upsample_amd64.s is not built.
var upsampleAVX2 = false

func upBilinearRowAVX2(out, a, b []float32) {
	panic("cpu: upBilinearRowAVX2 without amd64 assembly")
}
