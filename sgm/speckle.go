package sgm

// Speckle removal marks invalid every connected region of fewer than size
// valid pixels, where 4-neighbours belong to one region when their
// disparities differ by at most jump. The regions are the classes of a
// symmetric relation, so any labelling finds the same ones; this one runs
// in bands of rows in parallel:
//
//  1. label: within each band, a raster scan joins each valid pixel to its
//     left and upper neighbours in a union-find forest (union by size, path
//     halving), then points every pixel at its band's root;
//  2. merge: one goroutine joins the roots across each boundary between
//     bands, adding their sizes;
//  3. sweep: each band reads its pixels' final roots (no writes to the
//     forest) and marks invalid those whose region is too small.
//
// The output depends only on the map, never on the bands or the order.

// speckleScratch holds the buffers of speckle removal.
type speckleScratch struct {
	// parent is the union-find forest, one entry per pixel: the index of
	// its parent, or −(region size) at a root.
	parent []int32
}

func (s *speckleScratch) reset(n int) { s.parent = grow(s.parent, n) }

// near reports whether valid pixels p and q belong to one region.
func near(disp []float32, p, q int, jump float32) bool {
	d := disp[q] - disp[p]
	return d <= jump && d >= -jump
}

// root returns the root of p, halving the path; the forest of p must not
// change concurrently.
func (s *speckleScratch) root(p int32) int32 {
	par := s.parent
	for par[p] >= 0 {
		if q := par[p]; par[q] >= 0 {
			par[p] = par[q]
		}
		p = par[p]
	}
	return p
}

// peek returns the root of p without changing the forest.
func (s *speckleScratch) peek(p int32) int32 {
	for s.parent[p] >= 0 {
		p = s.parent[p]
	}
	return p
}

// union joins the regions of p and q.
func (s *speckleScratch) union(p, q int32) {
	a, b := s.root(p), s.root(q)
	if a == b {
		return
	}
	par := s.parent
	if par[a] > par[b] || (par[a] == par[b] && a > b) { // a becomes the larger root
		a, b = b, a
	}
	par[a] += par[b]
	par[b] = a
}

// label is phase 1 on rows [y0, y1) of the w-wide map.
func (s *speckleScratch) label(disp []float32, valid []uint8, w, y0, y1 int, jump float32) {
	par := s.parent
	for y := y0; y < y1; y++ {
		for p := y * w; p < (y+1)*w; p++ {
			par[p] = -1
			if valid[p] == invalid {
				continue
			}
			if p > y*w && valid[p-1] != invalid && near(disp, p, p-1, jump) {
				s.union(int32(p), int32(p-1))
			}
			if y > y0 && valid[p-w] != invalid && near(disp, p, p-w, jump) {
				s.union(int32(p), int32(p-w))
			}
		}
	}
	for p := y0 * w; p < y1*w; p++ {
		if par[p] >= 0 {
			par[p] = s.root(int32(p))
		}
	}
}

// merge is phase 2: it joins the regions across the boundary above row y
// of the w-wide map.
func (s *speckleScratch) merge(disp []float32, valid []uint8, w, y int, jump float32) {
	for p := y * w; p < (y+1)*w; p++ {
		if valid[p] != invalid && valid[p-w] != invalid && near(disp, p, p-w, jump) {
			s.union(int32(p), int32(p-w))
		}
	}
}

// sweep is phase 3 on rows [y0, y1): pixels of regions smaller than size
// become invalid.
func (s *speckleScratch) sweep(valid []uint8, w, y0, y1, size int) {
	for p := y0 * w; p < y1*w; p++ {
		if valid[p] != invalid && -int(s.parent[s.peek(int32(p))]) < size {
			valid[p] = invalid
		}
	}
}

// remove runs the three phases on one goroutine: speckle removal of the
// whole w×h map.
func (s *speckleScratch) remove(disp []float32, valid []uint8, w, h, size int, jump float32) {
	s.reset(w * h)
	s.label(disp, valid, w, 0, h, jump)
	s.sweep(valid, w, 0, h, size)
}
