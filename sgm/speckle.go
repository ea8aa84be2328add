package sgm

// speckleScratch holds the buffers of speckle removal.
type speckleScratch struct {
	seen   []bool
	region []int32
}

// remove marks invalid every connected region of fewer than size valid
// pixels of the w×h map, where 4-neighbours belong to one region when their
// disparities differ by at most jump.
func (s *speckleScratch) remove(disp []float32, valid []uint8, w, h, size int, jump float32) {
	s.seen = grow(s.seen, w*h)
	clear(s.seen)
	s.region = grow(s.region, w*h)
	for start := range disp {
		if valid[start] == invalid || s.seen[start] {
			continue
		}
		s.seen[start] = true
		region := append(s.region[:0], int32(start))
		for k := 0; k < len(region); k++ {
			p := int(region[k])
			x, y, v := p%w, p/w, disp[p]
			for _, q := range [4]int{p - 1, p + 1, p - w, p + w} {
				switch {
				case q == p-1 && x == 0, q == p+1 && x == w-1, q == p-w && y == 0, q == p+w && y == h-1:
					continue
				}
				if valid[q] == invalid || s.seen[q] {
					continue
				}
				if d := disp[q] - v; d > jump || d < -jump {
					continue
				}
				s.seen[q] = true
				region = append(region, int32(q))
			}
		}
		if len(region) < size {
			for _, p := range region {
				valid[p] = invalid
			}
		}
	}
}
