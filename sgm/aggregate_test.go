package sgm

import (
	"math/rand/v2"
	"slices"
	"testing"
)

// randomRun builds a pathRun over random data: a chained path (each step
// reads the vector the step before wrote, forwards or backwards) or
// independent lines.
func randomRun(r *rand.Rand, np, n int, chained, backwards bool) *pathRun {
	vs := np + vecPad
	k := n + 1
	cur := make([]uint16, k*vs)
	for i := range cur {
		cur[i] = uint16(r.IntN(3000))
	}
	initSentinels(cur, np)
	cost := make([]uint8, k*np)
	sum := make([]uint16, k*np)
	for i := range cost {
		cost[i] = uint8(r.IntN(64))
		sum[i] = uint16(r.IntN(20000))
	}
	p2 := make([]uint16, n)
	for i := range p2 {
		p2[i] = uint16(8 + r.IntN(200))
	}
	mins := make([]uint16, k)
	for i := range k {
		mins[i] = slices.Min(cur[i*vs : i*vs+np])
	}
	run := &pathRun{cur: cur, cost: cost, sum: sum, p2: p2, n: n, np: np, p1: uint16(1 + r.IntN(15))}
	switch {
	case chained && !backwards:
		run.prev, run.curOff, run.curStep, run.prevOff, run.prevStep = cur, vs, vs, 0, vs
		run.costOff, run.costStep = np, np
		run.pmin, run.cmin, run.pminOff, run.pminStep, run.cminOff, run.cminStep = mins, mins, 0, 1, 1, 1
	case chained:
		run.prev, run.curOff, run.curStep, run.prevOff, run.prevStep = cur, (k-2)*vs, -vs, (k-1)*vs, -vs
		run.costOff, run.costStep = (k-2)*np, -np
		run.pmin, run.cmin, run.pminOff, run.pminStep, run.cminOff, run.cminStep = mins, mins, k-1, -1, k-2, -1
	default:
		prev := make([]uint16, k*vs)
		for i := range prev {
			prev[i] = uint16(r.IntN(3000))
		}
		initSentinels(prev, np)
		pm := make([]uint16, k)
		for i := range k {
			pm[i] = slices.Min(prev[i*vs : i*vs+np])
		}
		run.prev, run.curOff, run.curStep, run.prevOff, run.prevStep = prev, 0, vs, 0, vs
		run.costOff, run.costStep = 0, np
		run.pmin, run.cmin, run.pminOff, run.pminStep, run.cminOff, run.cminStep = pm, mins, 0, 1, 0, 1
	}
	return run
}

func cloneRun(a *pathRun) *pathRun {
	b := *a
	b.cur = slices.Clone(a.cur)
	if &a.prev[0] == &a.cur[0] {
		b.prev = b.cur
	} else {
		b.prev = slices.Clone(a.prev)
	}
	b.sum = slices.Clone(a.sum)
	b.cmin = slices.Clone(a.cmin)
	if &a.pmin[0] == &a.cmin[0] {
		b.pmin = b.cmin
	}
	return &b
}

// The AVX2 and AVX-512 kernels give the portable kernel's values, for
// chained paths in both directions and for independent lines, adding to
// sum, storing, and adding to a separate base, for np with and without a
// last block of 16 levels.
func TestPathRunKernels(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build")
	}
	r := rand.New(rand.NewPCG(4, 5))
	for _, np := range []int{16, 32, 48, 64, 80, 96, 128, 144} {
		for _, mode := range []struct{ chained, backwards, store, base bool }{{true, false, false, false}, {true, true, false, false}, {false, false, false, false},
			{true, false, true, false}, {false, false, true, false}, {true, false, false, true}, {true, true, false, true}, {false, false, false, true}} {
			g := randomRun(r, np, 1+r.IntN(40), mode.chained, mode.backwards)
			g.store = mode.store
			if mode.base {
				addBase(r, g)
			}
			for _, k := range compareKernels(g) {
				t.Errorf("np %d, %+v: %s kernel differs from the portable one", np, mode, k)
			}
		}
	}
}

// The whole matcher gives the same bits with either kernel.
func TestKernelsSameResult(t *testing.T) {
	if !useAVX2 {
		t.Skip("no AVX2 kernel on this machine or build")
	}
	l, r := stepPair(130, 50, 60, 5, 13)
	a := match(t, nil, l, r)
	defer func() { useAVX2, useAVX512, useAVX512BW = hasAVX2, hasAVX512, hasAVX512BW }()
	useAVX512BW = false
	if b := match(t, nil, l, r); !sameResult(a, b) {
		t.Error("the AVX2 aggregation kernel gives another result than the fastest kernels")
	}
	useAVX2, useAVX512 = false, false
	if b := match(t, nil, l, r); !sameResult(a, b) {
		t.Error("the portable kernels give another result than the fastest ones")
	}
}

func TestPathRunChecks(t *testing.T) {
	r := rand.New(rand.NewPCG(6, 7))
	run := randomRun(r, 32, 10, true, false)
	run.n = 11 // one step past the buffers
	defer func() {
		if recover() == nil {
			t.Error("a run past its buffers did not panic")
		}
	}()
	run.run()
}

// roundsRun builds a pathRun of rounds over random data laid out as the
// row phase lays out n rows of w pixels: n lines (rows) per round, each
// round one pixel further along every row, forwards or backwards.
func roundsRun(r *rand.Rand, np, n, w int, backwards bool) *pathRun {
	vs := np + vecPad
	cur := make([]uint16, w*n*vs)
	for i := range cur {
		cur[i] = uint16(r.IntN(3000))
	}
	initSentinels(cur, np)
	cost := make([]uint8, n*w*np)
	sum := make([]uint16, n*w*np)
	for i := range cost {
		cost[i] = uint8(r.IntN(64))
		sum[i] = uint16(r.IntN(20000))
	}
	p2 := make([]uint16, w*n)
	mins := make([]uint16, w*n)
	for i := range p2 {
		p2[i] = uint16(8 + r.IntN(200))
		mins[i] = slices.Min(cur[i*vs : i*vs+np])
	}
	run := &pathRun{cur: cur, prev: cur, cost: cost, sum: sum, p2: p2, pmin: mins, cmin: mins, n: n, np: np, p1: uint16(1 + r.IntN(15)), m: w - 1,
		curStep: vs, prevStep: vs, costStep: w * np, pminStep: 1, cminStep: 1}
	if !backwards { // pixel x from pixel x−1
		run.curOff, run.prevOff, run.costOff, run.p2Off, run.pminOff, run.cminOff = n*vs, 0, np, n, 0, n
		run.curOuter, run.prevOuter, run.costOuter, run.p2Outer, run.pminOuter, run.cminOuter = n*vs, n*vs, np, n, n, n
	} else { // pixel x from pixel x+1
		run.curOff, run.prevOff, run.costOff, run.p2Off, run.pminOff, run.cminOff = (w-2)*n*vs, (w-1)*n*vs, (w-2)*np, (w-1)*n, (w-1)*n, (w-2)*n
		run.curOuter, run.prevOuter, run.costOuter, run.p2Outer, run.pminOuter, run.cminOuter = -n*vs, -n*vs, -np, -n, -n, -n
	}
	return run
}

// The kernels agree on runs of rounds (the row phase's layout), both ways,
// adding to sum and to a separate base.
func TestPathRunRounds(t *testing.T) {
	r := rand.New(rand.NewPCG(8, 9))
	for _, np := range []int{16, 48, 64, 80} {
		for _, backwards := range []bool{false, true} {
			for _, withBase := range []bool{false, true} {
				g := roundsRun(r, np, 1+r.IntN(5), 2+r.IntN(30), backwards)
				if withBase {
					addBase(r, g)
				}
				for _, k := range compareKernels(g) {
					t.Errorf("np %d, backwards %v, base %v: %s kernel differs from the portable one", np, backwards, withBase, k)
				}
				// The same run as one round per pixel, stepped by hand.
				h := cloneRun(g)
				for i := range h.rounds() {
					s := *h
					s.m = 0
					s.curOff += i * h.curOuter
					s.prevOff += i * h.prevOuter
					s.costOff += i * h.costOuter
					s.p2Off += i * h.p2Outer
					s.pminOff += i * h.pminOuter
					s.cminOff += i * h.cminOuter
					s.runGeneric()
				}
				g.runGeneric()
				if !slices.Equal(g.cur, h.cur) || !slices.Equal(g.sum, h.sum) || !slices.Equal(g.cmin, h.cmin) {
					t.Fatalf("np %d, backwards %v: rounds differ from single rounds", np, backwards)
				}
			}
		}
	}
}

// addBase gives r a separate base of random sums.
func addBase(rnd *rand.Rand, r *pathRun) {
	r.base = make([]uint16, len(r.sum))
	for i := range r.base {
		r.base[i] = uint16(rnd.IntN(20000))
	}
}

// compareKernels runs copies of r with each kernel the machine has and
// returns the names of those whose vectors, sums or minima differ from the
// portable kernel's.
func compareKernels(r *pathRun) []string {
	want := cloneRun(r)
	want.check()
	want.runGeneric()
	var bad []string
	for _, k := range []struct {
		name string
		has  bool
		run  func(*pathRun)
	}{{"AVX2", hasAVX2, (*pathRun).runAVX2}, {"AVX-512", hasAVX512BW, (*pathRun).runAVX512}} {
		if !k.has {
			continue
		}
		got := cloneRun(r)
		k.run(got)
		if !slices.Equal(want.cur, got.cur) || !slices.Equal(want.sum, got.sum) || !slices.Equal(want.cmin, got.cmin) {
			bad = append(bad, k.name)
		}
	}
	return bad
}
