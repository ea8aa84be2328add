package model

// The liveness plan of a Net: which tensors of the layer list share a
// buffer. A tensor lives from the step that writes it to the last step
// that reads it; the network's outputs live to the end of the call. A step
// takes its output buffer from the buffers no live tensor holds (the
// smallest that is large enough, else a new one) before the buffers of its
// inputs that die at that step are freed, so an output never shares a
// buffer with one of its own inputs. Only the activations still needed
// are kept: 8.3 MB at 256×128 for the default network, against 14.7 MB
// for a buffer per tensor.

// planBuffers gives every tensor of m (bufs[1:], in step order) a buffer.
// keep lists tensor indices that live to the end; keepAll keeps every
// tensor (for Net.Tensor and tests that read intermediate tensors).
// sizes[k] is tensor k's length. It returns the buffers by tensor index
// (index 0, the input, stays nil).
func planBuffers(steps []step, sizes []int, keep map[int]bool, keepAll bool) [][]float32 {
	bufs := make([][]float32, len(sizes))
	if keepAll {
		for k := 1; k < len(sizes); k++ {
			bufs[k] = make([]float32, sizes[k])
		}
		return bufs
	}
	slot, slotLen := planSlots(steps, sizes, keep)
	slots := make([][]float32, len(slotLen))
	for j, n := range slotLen {
		slots[j] = make([]float32, n)
	}
	for k := 1; k < len(sizes); k++ {
		if slot[k] >= 0 {
			bufs[k] = slots[slot[k]][:sizes[k]]
		}
	}
	return bufs
}

// planSlots is the liveness plan without the memory: slot[k] is the buffer
// tensor k is written to (-1 for the input, index 0) and slotLen[j] the
// length of buffer j.
func planSlots(steps []step, sizes []int, keep map[int]bool) (slot, slotLen []int) {
	slot = make([]int, len(sizes))
	slot[0] = -1
	last := make([]int, len(sizes))
	for i, s := range steps {
		for _, k := range s.in {
			last[k] = i
		}
	}
	var free []int // slots no live tensor holds
	for i, s := range steps {
		need := sizes[s.out]
		best := -1
		for j, b := range free {
			if slotLen[b] >= need && (best < 0 || slotLen[b] < slotLen[free[best]]) {
				best = j
			}
		}
		if best >= 0 {
			slot[s.out] = free[best]
			free = append(free[:best], free[best+1:]...)
		} else {
			slot[s.out] = len(slotLen)
			slotLen = append(slotLen, need)
		}
		if !keep[s.out] && last[s.out] < i {
			// Written and never read (not an output): free at once.
			free = append(free, slot[s.out])
		}
		for n, k := range s.in {
			if k == 0 || keep[k] || last[k] != i || containsBefore(s.in, k, n) {
				continue
			}
			free = append(free, slot[k])
		}
	}
	return slot, slotLen
}

// containsBefore reports whether k appears in in[:n] (a step that reads a
// tensor twice frees it once).
func containsBefore(in []int, k, n int) bool {
	for _, j := range in[:n] {
		if j == k {
			return true
		}
	}
	return false
}

// bufferBytes returns the bytes held by the distinct buffers of bufs.
func bufferBytes(bufs [][]float32) int64 {
	seen := map[*float32]bool{}
	var n int64
	for _, b := range bufs {
		if cap(b) == 0 {
			continue
		}
		p := &b[:1][0]
		if !seen[p] {
			seen[p] = true
			n += 4 * int64(cap(b))
		}
	}
	return n
}

// owns reports whether tensor k has its buffer to itself to the end of a
// call: every tensor of a NewInspectNet, the outputs of a NewNet.
func (m *Net) owns(k int) bool {
	if m.keepAll {
		return true
	}
	for _, name := range m.arch.Outputs {
		if m.index[name] == k {
			return true
		}
	}
	return false
}

// shareConvScratch gives the convolutions of steps, which run one after
// another, one padded-input buffer and one packed-weight buffer, each the
// size of the largest a layer needs, instead of a pair each.
func shareConvScratch(steps []step) {
	var nx, nw int
	for _, s := range steps {
		if s.conv != nil {
			x, w := s.conv.ForwardScratch()
			nx, nw = max(nx, x), max(nw, w)
		}
	}
	if nx == 0 && nw == 0 {
		return
	}
	xpad, wpack := make([]float32, nx), make([]float32, nw)
	for _, s := range steps {
		if s.conv != nil {
			s.conv.ShareForwardScratch(xpad, wpack)
		}
	}
}
