//go:build !purego

package sgm

import "golang.org/x/sys/cpu"

// useAVX2 selects the AVX2 aggregation kernel; tests switch it off to check
// the portable one.
var useAVX2 = hasAVX2

var hasAVX2 = cpu.X86.HasAVX2

//go:noescape
func pathRunAVX2(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum, base *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16, store bool,
	m, curOuter, prevOuter, costOuter, p2Outer, pminOuter, cminOuter int)

func (r *pathRun) runAVX2() {
	base := &r.sum[r.costOff]
	if r.base != nil && !r.store {
		base = &r.base[r.costOff]
	}
	pathRunAVX2(&r.cur[r.curOff], &r.prev[r.prevOff], r.curStep, r.prevStep, &r.cost[r.costOff], &r.sum[r.costOff], base, r.costStep,
		&r.p2[r.p2Off], &r.pmin[r.pminOff], r.pminStep, &r.cmin[r.cminOff], r.cminStep, r.n, r.np, r.p1, r.store,
		r.rounds(), r.curOuter, r.prevOuter, r.costOuter, r.p2Outer, r.pminOuter, r.cminOuter)
}

// useAVX512BW selects the AVX-512 aggregation kernel.
var useAVX512BW = hasAVX512BW

var hasAVX512BW = cpu.X86.HasAVX512F && cpu.X86.HasAVX512BW

//go:noescape
func pathRunAVX512(cur, prev *uint16, curStep, prevStep int, cost *uint8, sum, base *uint16, costStep int, p2, pmin *uint16, pminStep int, cmin *uint16, cminStep, n, np int, p1 uint16, store, chained bool,
	m, curOuter, prevOuter, costOuter, p2Outer, pminOuter, cminOuter int)

func (r *pathRun) runAVX512() {
	base := &r.sum[r.costOff]
	if r.base != nil && !r.store {
		base = &r.base[r.costOff]
	}
	// Chained: step j+1 reads the minimum step j wrote.
	chained := r.rounds() == 1 && &r.pmin[0] == &r.cmin[0] && len(r.pmin) == len(r.cmin) && r.pminStep == r.cminStep && r.pminOff+r.pminStep == r.cminOff
	pathRunAVX512(&r.cur[r.curOff], &r.prev[r.prevOff], r.curStep, r.prevStep, &r.cost[r.costOff], &r.sum[r.costOff], base, r.costStep,
		&r.p2[r.p2Off], &r.pmin[r.pminOff], r.pminStep, &r.cmin[r.cminOff], r.cminStep, r.n, r.np, r.p1, r.store, chained,
		r.rounds(), r.curOuter, r.prevOuter, r.costOuter, r.p2Outer, r.pminOuter, r.cminOuter)
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

//go:noescape
func winnersAVX2(sum *uint16, np, n, w int, best *int32, bestV, second *uint16)

//go:noescape
func rightWinnersAVX2(sum *uint16, np, n, w, lo int, rarg *int32, t, a *uint16)

//go:noescape
func winnersAVX512(sum *uint16, np, n, w int, best *int32, bestV, second *uint16)

// winners is winnersGeneric with the fastest kernel.
func winners(sum []uint16, np, n, w int, best []int32, bestV, second []uint16) {
	if !useAVX2 || np%16 != 0 || n < 1 || n > np {
		winnersGeneric(sum, np, n, w, best, bestV, second)
		return
	}
	_, _, _, _ = sum[w*np-1], best[w-1], bestV[w-1], second[w-1]
	if useAVX512BW && n > np-16 {
		winnersAVX512(&sum[0], np, n, w, &best[0], &bestV[0], &second[0])
		return
	}
	winnersAVX2(&sum[0], np, n, w, &best[0], &bestV[0], &second[0])
}

// rightWinners is rightWinnersGeneric with the fastest kernel; t and a
// are scratch of np+vecPad values.
func rightWinners(sum []uint16, np, n, w, lo int, rarg []int32, t, a []uint16) {
	if !useAVX2 || np%16 != 0 || n < 1 || n > np {
		rightWinnersGeneric(sum, np, n, w, lo, rarg)
		return
	}
	_, _, _, _ = sum[w*np-1], rarg[w-1], t[np-1], a[np-1]
	for i := range rarg[:w] {
		rarg[i] = -1
	}
	rightWinnersAVX2(&sum[0], np, n, w, lo, &rarg[0], &t[0], &a[0])
	// Lanes d < n−1 after the last pixel belong to right pixels no later
	// left pixel sees.
	for d := range n - 1 {
		if xr := w - 1 - lo - d; xr >= 0 {
			rarg[xr] = int32(a[d])
		}
	}
}

// useAVX512 selects the AVX-512 matching-cost kernel (VPOPCNTQ).
var useAVX512 = hasAVX512

var hasAVX512 = cpu.X86.HasAVX512F && cpu.X86.HasAVX512VPOPCNTDQ

//go:noescape
func costRowAVX512(cost *uint8, np int, cl, rev *uint64, w, lo int)

// costRow is costRowGeneric with the fastest kernel; rev is scratch of
// 2w+np words.
func costRow(cost []uint8, cl, cr []uint64, w, lo, n, np int, costMax uint8, rev []uint64) {
	if !useAVX512 || np%16 != 0 || lo >= w {
		costRowGeneric(cost, cl, cr, w, lo, n, np, costMax)
		return
	}
	// Right column x−lo−d is rev[w−1−x+lo+d]: increasing in d.
	rev = rev[:w+lo+np]
	for j := range w {
		rev[j] = cr[w-1-j]
	}
	clear(rev[w:])
	_, _ = cost[w*np-1], cl[w-1]
	costRowAVX512(&cost[0], np, &cl[0], &rev[0], w, lo)
	for x := range w {
		k := max(min(n, x-lo+1), 0)
		c := cost[x*np : (x+1)*np]
		for d := k; d < np; d++ {
			c[d] = costMax
		}
	}
}
