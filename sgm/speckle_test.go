package sgm

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// Hand cases: a 3-pixel island of disparity 20 in a field of 5 is removed
// when regions need 4 pixels and kept when they need 3; a ramp of steps of
// 1 px is one region with a jump of 1, and falls apart into 1-pixel
// columns with a jump of 0.5.
func TestSpeckleRemoval(t *testing.T) {
	const w, h = 6, 4
	field := func() ([]float32, []uint8) {
		d, v := make([]float32, w*h), make([]uint8, w*h)
		for i := range d {
			d[i], v[i] = 5, matched
		}
		d[1*w+2], d[1*w+3], d[2*w+3] = 20, 20, 20.5
		v[3*w+5] = invalid
		return d, v
	}
	var s speckleScratch
	d, v := field()
	s.remove(d, v, w, h, 4, 1)
	for i := range v {
		island := i == 1*w+2 || i == 1*w+3 || i == 2*w+3
		if want := !island && i != 3*w+5; (v[i] != invalid) != want {
			t.Errorf("size 4: pixel %d valid %v, want %v", i, v[i] != invalid, want)
		}
	}
	d, v = field()
	s.remove(d, v, w, h, 3, 1)
	if v[1*w+2] == invalid || v[2*w+3] == invalid {
		t.Error("size 3: the 3-pixel island was removed")
	}
	ramp := make([]float32, w*h)
	for i := range ramp {
		ramp[i] = float32(10 + i%w)
	}
	for _, c := range []struct {
		jump float32
		kept bool
	}{{1, true}, {0.5, false}} {
		v := make([]uint8, w*h)
		for i := range v {
			v[i] = matched
		}
		s.remove(ramp, v, w, h, 5, c.jump)
		for i := range v {
			if (v[i] != invalid) != c.kept {
				t.Fatalf("ramp, jump %v: pixel %d valid %v, want %v", c.jump, i, v[i] != invalid, c.kept)
			}
		}
	}
}

// floodRegions is the textbook definition of the regions: a breadth-first
// flood fill from each unvisited valid pixel over 4-neighbours whose
// disparities differ by at most jump; it returns each pixel's region size
// (0 where invalid).
func floodRegions(disp []float32, valid []uint8, w, h int, jump float32) []int {
	size := make([]int, w*h)
	seen := make([]bool, w*h)
	for start := range disp {
		if valid[start] == invalid || seen[start] {
			continue
		}
		seen[start] = true
		region := []int{start}
		for k := 0; k < len(region); k++ {
			p := region[k]
			x, y := p%w, p/w
			for _, q := range [][2]int{{x - 1, y}, {x + 1, y}, {x, y - 1}, {x, y + 1}} {
				if q[0] < 0 || q[0] >= w || q[1] < 0 || q[1] >= h {
					continue
				}
				i := q[1]*w + q[0]
				if valid[i] == invalid || seen[i] || math.Abs(float64(disp[i]-disp[p])) > float64(jump) {
					continue
				}
				seen[i] = true
				region = append(region, i)
			}
		}
		for _, p := range region {
			size[p] = len(region)
		}
	}
	return size
}

// Labelling in bands of any height, merged across their boundaries,
// removes exactly the regions the flood fill finds too small, on random
// maps with holes, plateaus and regions that wind across many bands.
func TestSpeckleBands(t *testing.T) {
	r := rand.New(rand.NewPCG(7, 15))
	for trial := range 40 {
		w, h := 1+r.IntN(40), 1+r.IntN(40)
		disp, valid := make([]float32, w*h), make([]uint8, w*h)
		levels := 2 + r.IntN(6)
		for i := range disp {
			disp[i] = float32(r.IntN(levels)) * 0.75
			if r.IntN(5) > 0 {
				valid[i] = matched
			}
		}
		jump := float32(0.5 + r.Float64())
		size := 1 + r.IntN(30)
		want := floodRegions(disp, valid, w, h, jump)
		for _, band := range []int{1, 2, 3, 7, h} {
			v := slices.Clone(valid)
			var s speckleScratch
			s.reset(w * h)
			for y0 := 0; y0 < h; y0 += band {
				s.label(disp, v, w, y0, min(y0+band, h), jump)
			}
			for y := band; y < h; y += band {
				s.merge(disp, v, w, y, jump)
			}
			for y0 := 0; y0 < h; y0 += band {
				s.sweep(v, w, y0, min(y0+band, h), size)
			}
			for i := range v {
				keep := valid[i] != invalid && want[i] >= size
				if (v[i] != invalid) != keep {
					t.Fatalf("trial %d (%dx%d, size %d, bands of %d rows): pixel %d valid %v, want %v (region of %d)", trial, w, h, size, band, i, v[i] != invalid, keep, want[i])
				}
			}
		}
	}
}
