package sgm

import "fmt"

// Cost aggregation along one path (Hirschmüller, "Stereo processing by
// semiglobal matching and mutual information", IEEE TPAMI 30(2), 2008,
// eq. 13): for the pixel p after p−r on the path,
//
//	L(p, d) = C(p, d) + min(L(p−r, d), L(p−r, d±1) + P1, min_k L(p−r, k) + P2) − min_k L(p−r, k)
//
// A path vector holds np values (np a multiple of 16) followed by 16
// sentinel slots set to noPath, so that the AVX2 kernel reads its right
// neighbour lanes from memory; the left neighbour of level 0 is noPath too.
// Vectors sit vecPad slots apart in the path buffers.

// noPath is the sentinel beside each path vector; saturating arithmetic
// keeps it out of every minimum.
const noPath = 0xffff

// vecPad is the sentinel tail of a path vector.
const vecPad = 16

// initSentinels sets the tails of the vectors of length np at stride np+vecPad
// in buf.
func initSentinels(buf []uint16, np int) {
	vs := np + vecPad
	for o := 0; o+vs <= len(buf); o += vs {
		for i := o + np; i < o+vs; i++ {
			buf[i] = noPath
		}
	}
}

// pathStart sets cur (np values) to the costs, writes them plus base to
// sum (base may be sum; nil stores the costs alone) and returns their
// minimum: the first pixel of a path.
func pathStart(cur []uint16, cost []uint8, sum, base []uint16) uint16 {
	cur = cur[:len(cost)]
	sum = sum[:len(cost)]
	if base != nil {
		base = base[:len(cost)]
	}
	m := uint16(noPath)
	for d, c := range cost {
		v := uint16(c)
		cur[d] = v
		if base == nil {
			sum[d] = v
		} else {
			sum[d] = base[d] + v
		}
		m = min(m, v)
	}
	return m
}

// pathRun is m rounds of n steps of aggregation, along one path or across
// n lines: step j of round i computes the vector at cur[curOff+j·curStep+
// i·curOuter:] from the one at prev[prevOff+j·prevStep+i·prevOuter:] (np
// values and its sentinel tail), the costs at cost[costOff+j·costStep+
// i·costOuter:], which it also adds to sum at the same offsets, the
// large-jump penalty p2[p2Off+j+i·p2Outer] and the previous vector's
// minimum pmin[pminOff+j·pminStep+i·pminOuter]; it writes the new minimum
// to cmin[cminOff+j·cminStep+i·cminOuter]. m = 0 means one round. A step
// may read what an earlier step wrote (a path: prev = cur one step back;
// or n lines, one step per line in each round, each round one pixel
// further along every line). With store, the vectors are stored in sum
// instead of added: the first path of a pixel. With base (and not store),
// sum receives base plus the vector: base holds the other paths' sums at
// the same offsets, and sum is scratch. It panics if a step would reach
// outside a slice or np is not a positive multiple of 16.
type pathRun struct {
	cur, prev                          []uint16
	curOff, curStep, prevOff, prevStep int
	cost                               []uint8
	sum, base                          []uint16
	costOff, costStep                  int
	p2                                 []uint16
	p2Off                              int
	pmin, cmin                         []uint16
	pminOff, pminStep                  int
	cminOff, cminStep                  int
	n, np                              int
	p1                                 uint16
	store                              bool

	m                                       int
	curOuter, prevOuter, costOuter, p2Outer int
	pminOuter, cminOuter                    int
}

// rounds returns the number of rounds.
func (r *pathRun) rounds() int { return max(r.m, 1) }

// check panics unless every step stays inside the slices.
func (r *pathRun) check() {
	if r.np <= 0 || r.np%16 != 0 {
		panic(fmt.Sprintf("sgm: pathRun with %d levels", r.np))
	}
	if r.n <= 0 || r.m < 0 {
		return
	}
	m := r.rounds()
	span := func(name string, off, step, outer, width, length int) {
		a, b := off, off+(r.n-1)*step
		c, d := a+(m-1)*outer, b+(m-1)*outer
		first, last := min(a, b, c, d), max(a, b, c, d)
		if first < 0 || last+width > length {
			panic(fmt.Sprintf("sgm: pathRun: %s steps %d … %d (+%d) outside a slice of %d", name, first, last, width, length))
		}
	}
	span("cur", r.curOff, r.curStep, r.curOuter, r.np, len(r.cur))
	span("prev", r.prevOff, r.prevStep, r.prevOuter, r.np+vecPad, len(r.prev))
	span("cost", r.costOff, r.costStep, r.costOuter, r.np, len(r.cost))
	span("sum", r.costOff, r.costStep, r.costOuter, r.np, len(r.sum))
	if r.base != nil {
		span("base", r.costOff, r.costStep, r.costOuter, r.np, len(r.base))
	}
	span("p2", r.p2Off, 1, r.p2Outer, 1, len(r.p2))
	span("pmin", r.pminOff, r.pminStep, r.pminOuter, 1, len(r.pmin))
	span("cmin", r.cminOff, r.cminStep, r.cminOuter, 1, len(r.cmin))
}

// runGeneric is pathRun's portable kernel.
func (r *pathRun) runGeneric() {
	np := r.np
	p1 := uint32(r.p1)
	for i := range r.rounds() {
		for j := range r.n {
			o := r.costOff + j*r.costStep + i*r.costOuter
			cur := r.cur[r.curOff+j*r.curStep+i*r.curOuter:][:np]
			prev := r.prev[r.prevOff+j*r.prevStep+i*r.prevOuter:][:np+1]
			cost := r.cost[o:][:np]
			sum := r.sum[o:][:np]
			base := sum
			if r.base != nil {
				base = r.base[o:][:np]
			}
			prevMin := uint32(r.pmin[r.pminOff+j*r.pminStep+i*r.pminOuter])
			jump := min(prevMin+uint32(r.p2[r.p2Off+j+i*r.p2Outer]), noPath)
			m := uint32(noPath)
			left := uint32(noPath) // prev[d−1]
			for d, c := range cost {
				p := uint32(prev[d])
				v := min(p, left+p1, uint32(prev[d+1])+p1, jump)
				left = p
				v += uint32(c) - prevMin
				cur[d] = uint16(v)
				if r.store {
					sum[d] = uint16(v)
				} else {
					sum[d] = base[d] + uint16(v)
				}
				m = min(m, v)
			}
			r.cmin[r.cminOff+j*r.cminStep+i*r.cminOuter] = uint16(m)
		}
	}
}

// run checks the steps and runs them with the fastest kernel.
func (r *pathRun) run() {
	r.check()
	if r.n <= 0 {
		return
	}
	if useAVX512BW {
		r.runAVX512()
		return
	}
	if useAVX2 {
		r.runAVX2()
		return
	}
	r.runGeneric()
}
