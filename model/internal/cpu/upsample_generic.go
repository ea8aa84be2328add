//go:build purego || !(amd64 || arm64)

package cpu

// upsampleSIMD is false where no assembly loops are built.
var upsampleSIMD = false

func upBilinearRowSIMD(out, a, b []float32) {
	panic("cpu: upBilinearRowSIMD without assembly")
}

func upBilinearBackRowSIMD(g, r0, r1, ru, rd []float32) {
	panic("cpu: upBilinearBackRowSIMD without assembly")
}
