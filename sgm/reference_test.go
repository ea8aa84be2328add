package sgm

import (
	"image"
	"math"
	"math/bits"
	"math/rand/v2"
	"testing"
)

// naiveSums computes the summed path costs of the method straight from its
// definition (census with replicated borders, Hamming cost, Hirschmüller's
// recurrence along each direction, P2 from the left image's grey levels),
// one pixel and one disparity at a time, for levels n from disparity lo.
func naiveSums(l, r *image.Gray, o *Options, lo, n int) [][]int {
	b := l.Bounds()
	w, h := b.Dx(), b.Dy()
	at := func(g *image.Gray, x, y int) int {
		return int(g.Pix[min(max(y, 0), h-1)*g.Stride+min(max(x, 0), w-1)])
	}
	cen := func(g *image.Gray, x, y int) uint64 {
		var c uint64
		for dy := -(o.CensusHeight / 2); dy <= o.CensusHeight/2; dy++ {
			for dx := -(o.CensusWidth / 2); dx <= o.CensusWidth/2; dx++ {
				if dx == 0 && dy == 0 {
					continue
				}
				c <<= 1
				if at(g, x+dx, y+dy) < at(g, x, y) {
					c |= 1
				}
			}
		}
		return c
	}
	costMax := o.CensusWidth*o.CensusHeight - 1
	cost := func(x, y, d int) int {
		xr := x - lo - d
		if xr < 0 {
			return costMax
		}
		return bits.OnesCount64(cen(l, x, y) ^ cen(r, xr, y))
	}
	p2 := func(x, y, px, py int) int {
		g := math.Abs(float64(at(l, x, y) - at(l, px, py)))
		p := float64(o.P2)
		if o.P2Falloff != Off {
			p = math.Round(p * o.P2Falloff / (o.P2Falloff + g))
		}
		return int(max(p, float64(o.P1+1)))
	}
	sums := make([][]int, w*h)
	for i := range sums {
		sums[i] = make([]int, n)
	}
	dirs := [][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}}
	if o.Paths == 8 {
		dirs = append(dirs, [2]int{1, 1}, [2]int{-1, -1}, [2]int{-1, 1}, [2]int{1, -1})
	}
	for _, r := range dirs {
		L := make([][]int, w*h)
		// Visit p after p − r: rows in the direction of r's y, columns in
		// the direction of r's x.
		ys, xs := seq(h, r[1] < 0), seq(w, r[0] < 0)
		if r[1] == 0 {
			ys = seq(h, false)
		}
		for _, y := range ys {
			for _, x := range xs {
				p := y*w + x
				L[p] = make([]int, n)
				px, py := x-r[0], y-r[1]
				if px < 0 || px >= w || py < 0 || py >= h {
					for d := range n {
						L[p][d] = cost(x, y, d)
					}
				} else {
					prev := L[py*w+px]
					m := prev[0]
					for _, v := range prev {
						m = min(m, v)
					}
					pen := p2(x, y, px, py)
					for d := range n {
						v := min(prev[d], m+pen)
						if d > 0 {
							v = min(v, prev[d-1]+o.P1)
						}
						if d < n-1 {
							v = min(v, prev[d+1]+o.P1)
						}
						L[p][d] = cost(x, y, d) + v - m
					}
				}
				for d := range n {
					sums[p][d] += L[p][d]
				}
			}
		}
	}
	return sums
}

func seq(n int, reverse bool) []int {
	s := make([]int, n)
	for i := range s {
		if reverse {
			s[i] = n - 1 - i
		} else {
			s[i] = i
		}
	}
	return s
}

func noiseGray(w, h int, seed uint64) *image.Gray {
	r := rand.New(rand.NewPCG(seed, 2))
	g := image.NewGray(image.Rect(0, 0, w, h))
	for i := range g.Pix {
		g.Pix[i] = uint8(r.IntN(256))
	}
	return g
}

// The summed path costs equal a direct evaluation of the method's
// definition, for 4 and 8 paths, with and without P2's adaptation, on
// random images (every level: the padded levels to 16 are not compared).
func TestSumsMatchDefinition(t *testing.T) {
	for _, c := range []Options{
		{Paths: 4, MaxDisparity: 9},
		{Paths: 8, MaxDisparity: 12, MinDisparity: 2, CensusWidth: 5, CensusHeight: 3},
		{Paths: 8, MaxDisparity: 20, P2Falloff: Off, P1: 3, P2: 40},
		{Paths: 8, MaxDisparity: 16, CensusWidth: 3, CensusHeight: 5},
	} {
		o, err := c.resolve()
		if err != nil {
			t.Fatal(err)
		}
		const w, h = 23, 17
		l, r := noiseGray(w, h, 1), noiseGray(w, h, 2)
		for i := range l.Pix {
			if i%5 != 0 { // some structure: a shifted copy with noise
				r.Pix[i] = l.Pix[max(i-3, 0)]
			}
		}
		lo, hi := o.MinDisparity, o.MaxDisparity
		wk := newWorker(&o)
		wk.inPlace = true // keep the final sums
		var res Result
		m, _ := NewMatcher(&c)
		if err := m.MatchInto(t.Context(), &res, l, r); err != nil { // allocates the maps
			t.Fatal(err)
		}
		wk.run(l, r, lo, hi-lo+1, &res)
		want := naiveSums(l, r, &o, lo, hi-lo+1)
		for p := range want {
			for d, v := range want[p] {
				if got := int(wk.sum[p*wk.np+d]); got != v {
					t.Fatalf("%+v: pixel (%d, %d), level %d: sum %d, want %d", c, p%w, p/w, d, got, v)
				}
			}
		}
	}
}
