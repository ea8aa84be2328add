package sgm

// Speckle removal marks invalid every connected region of fewer than size
// valid pixels, where 4-neighbours belong to one region when their
// disparities differ by at most jump. The regions are the classes of a
// symmetric relation, so any labelling finds the same ones; this one runs
// in bands of rows in parallel:
//
//  1. label: within each band, a raster scan joins each valid pixel to its
//     left and upper neighbours in a union-find forest (union by size, path
//     halving), then points every pixel at its root in the band;
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

// union joins the regions of p and q and returns the root of the joined
// region.
func (s *speckleScratch) union(p, q int32) int32 {
	return s.join(s.root(p), s.root(q))
}

// join joins the regions of roots a and b and returns its root: the root
// of the larger region (of the smaller index on a tie) takes the other.
func (s *speckleScratch) join(a, b int32) int32 {
	if a == b {
		return a
	}
	par := s.parent
	if par[a] > par[b] || (par[a] == par[b] && a > b) {
		a, b = b, a
	}
	par[a] += par[b]
	par[b] = a
	return a
}

// label is phase 1 on rows [y0, y1) of the w-wide map. The root of the
// pixel to the left is carried along the row: every join in the row
// involves its region, so the scan always knows that region's root.
func (s *speckleScratch) label(disp []float32, valid []uint8, w, y0, y1 int, jump float32) {
	par := s.parent
	for y := y0; y < y1; y++ {
		left := int32(-1) // the root of the region of the pixel to the left, if joined
		for p := y * w; p < (y+1)*w; p++ {
			par[p] = -1
			if valid[p] == invalid {
				left = -1
				continue
			}
			r := int32(-1)
			if left >= 0 && near(disp, p, p-1, jump) {
				r = left
			}
			if y > y0 && valid[p-w] != invalid && near(disp, p, p-w, jump) {
				u := s.root(int32(p - w))
				if r < 0 {
					r = u
				} else {
					r = s.join(r, u)
				}
			}
			if r < 0 {
				left = int32(p) // a region of its own
				continue
			}
			par[p] = r
			par[r]--
			left = r
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
