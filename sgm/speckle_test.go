package sgm

import "testing"

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
