//go:build purego || !amd64

package cpu

// activationAVX2 is false where activation_amd64.s is not built.
var activationAVX2 = false

func eluAVX2(dst, src []float32) { panic("cpu: eluAVX2 without amd64 assembly") }

func sigmoidScaleAVX2(dst, src []float32, scale float32) {
	panic("cpu: sigmoidScaleAVX2 without amd64 assembly")
}

func eluBackwardAVX2(dx, dy, y []float32) { panic("cpu: eluBackwardAVX2 without amd64 assembly") }
