//go:build purego || !amd64

package sgm

// useAVX2 is false without the AVX2 kernel.
var useAVX2 = false

const hasAVX2 = false

func (r *pathRun) runAVX2() { r.runGeneric() }

// useAVX512BW is false without the AVX-512 aggregation kernel.
var useAVX512BW = false

const hasAVX512BW = false

func (r *pathRun) runAVX512() { r.runGeneric() }

func darker(acc, n, c []uint8) { darkerGeneric(acc, n, c) }

func winners(sum []uint16, np, n, w int, best []int32, bestV, second []uint16) {
	winnersGeneric(sum, np, n, w, best, bestV, second)
}

func rightWinners(sum []uint16, np, n, w, lo int, rarg []int32, t, a []uint16) {
	rightWinnersGeneric(sum, np, n, w, lo, rarg)
}

const hasAVX512 = false

var useAVX512 = false

func costRow(cost []uint8, cl, cr []uint64, w, lo, n, np int, costMax uint8, rev []uint64) {
	costRowGeneric(cost, cl, cr, w, lo, n, np, costMax)
}
