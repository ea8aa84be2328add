//go:build purego || !amd64

package sgm

// useAVX2 is false without the AVX2 kernel.
var useAVX2 = false

const hasAVX2 = false

func (r *pathRun) runAVX2() { r.runGeneric() }

func darker(acc, n, c []uint8) { darkerGeneric(acc, n, c) }
