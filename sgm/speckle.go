package sgm

// speckleScratch holds the buffers of speckle removal.
type speckleScratch struct {
	seen   []bool
	region []int32 // pixel index and column, in pairs
}

// remove marks invalid every connected region of fewer than size valid
// pixels of the w×h map, where 4-neighbours belong to one region when their
// disparities differ by at most jump.
func (s *speckleScratch) remove(disp []float32, valid []uint8, w, h, size int, jump float32) {
	n := w * h
	s.seen = grow(s.seen, n)
	clear(s.seen)
	s.region = grow(s.region, 2*n)
	for start := range disp[:n] {
		if valid[start] == invalid || s.seen[start] {
			continue
		}
		s.seen[start] = true
		region := append(s.region[:0], int32(start), int32(start%w))
		for k := 0; k < len(region); k += 2 {
			p, x := int(region[k]), int(region[k+1])
			v := disp[p]
			visit := func(q, qx int) {
				if valid[q] == invalid || s.seen[q] {
					return
				}
				if d := disp[q] - v; d > jump || d < -jump {
					return
				}
				s.seen[q] = true
				region = append(region, int32(q), int32(qx))
			}
			if x > 0 {
				visit(p-1, x-1)
			}
			if x < w-1 {
				visit(p+1, x+1)
			}
			if p >= w {
				visit(p-w, x)
			}
			if p+w < n {
				visit(p+w, x)
			}
		}
		if len(region) < 2*size {
			for k := 0; k < len(region); k += 2 {
				valid[region[k]] = invalid
			}
		}
	}
}
