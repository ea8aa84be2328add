//go:build purego || !amd64

package cpu

// corrAVX2 is false where correlation_amd64.s is not built.
var corrAVX2 = false

func corrForwardAVX2(o []float32, ostride int, l []float32, lstride int, r []float32, rstride, c, nx, kc int, scale float32) {
	panic("cpu: corrForwardAVX2 without amd64 assembly")
}

func corrBackwardAVX2(out []float32, ostride int, g []float32, gstep int, v []float32, vstep, vstride, kn, nx int, scale float32) {
	panic("cpu: corrBackwardAVX2 without amd64 assembly")
}
