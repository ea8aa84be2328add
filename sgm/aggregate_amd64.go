//go:build !purego

package sgm

import "golang.org/x/sys/cpu"

// useAVX2 selects the AVX2 aggregation kernel; tests switch it off to check
// the portable one.
var useAVX2 = hasAVX2

var hasAVX2 = cpu.X86.HasAVX2

//go:noescape
func pathRunAVX2(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16)

func (r *pathRun) runAVX2() {
	pathRunAVX2(&r.cur[r.curOff], &r.prev[r.prevOff], r.curStep, r.prevStep, &r.cost[r.costOff], &r.sum[r.costOff], r.costStep,
		&r.p2[0], &r.pmin[r.pminOff], r.pminStep, &r.cmin[r.cminOff], r.cminStep, r.n, r.np, r.p1)
}

//go:noescape
func darkerAVX2(acc, n, c *uint8, count int)

// darker shifts each acc[x] left by one bit and sets the new bit when
// n[x] < c[x]; n and c must be at least as long as acc.
func darker(acc, n, c []uint8) {
	m := 0
	n, c = n[:len(acc)], c[:len(acc)]
	if useAVX2 && len(acc) >= 32 {
		m = len(acc) &^ 31
		darkerAVX2(&acc[0], &n[0], &c[0], m)
	}
	darkerGeneric(acc[m:], n[m:], c[m:])
}
