//go:build purego || !(amd64 || arm64)

package cpu

// activationSIMD is false where no assembly loops are built.
var activationSIMD = false

func eluSIMD(dst, src []float32) { panic("cpu: eluSIMD without assembly") }

func sigmoidScaleSIMD(dst, src []float32, scale float32) {
	panic("cpu: sigmoidScaleSIMD without assembly")
}

func eluBackwardSIMD(dx, dy, y []float32) { panic("cpu: eluBackwardSIMD without assembly") }
