package warp

import (
	"fmt"
	"math"
)

// Direction says which view is rebuilt, and so the sign of the shift.
type Direction int8

const (
	// RebuildLeft samples the right image at u = x - d*W.
	RebuildLeft Direction = -1
	// RebuildRight samples the left image at u = x + d*W.
	RebuildRight Direction = +1
)

// String returns the constant's name, or Direction(n) for an undefined value.
func (d Direction) String() string {
	switch d {
	case RebuildLeft:
		return "RebuildLeft"
	case RebuildRight:
		return "RebuildRight"
	}
	return fmt.Sprintf("Direction(%d)", int8(d))
}

// Border selects how samples outside the source image are filled.
type Border uint8

const (
	// Zero fills taps outside the image with 0.
	Zero Border = iota
	// Clamp clamps the sample coordinate to the image.
	Clamp
)

// String returns the constant's name, or Border(n) for an undefined value.
func (b Border) String() string {
	switch b {
	case Zero:
		return "Zero"
	case Clamp:
		return "Clamp"
	}
	return fmt.Sprintf("Border(%d)", uint8(b))
}

// Shape is the shape (N, C, H, W) of the images a kernel works on.
type Shape struct{ N, C, H, W int }

// check panics with a message naming the kernel if the shape, a slice
// length or an enum is a programmer's mistake. img lists the slices that
// must have N*C*H*W values, pl those that must have N*H*W; nil entries are
// skipped.
func (s Shape) check(name string, dir Direction, b Border, img, pl [][]float32) {
	if s.N <= 0 || s.C <= 0 || s.H <= 0 || s.W <= 0 || s.N > math.MaxInt32/s.C/s.H/s.W {
		panic(fmt.Sprintf("warp.%s: invalid shape %+v", name, s))
	}
	if dir != RebuildLeft && dir != RebuildRight {
		panic(fmt.Sprintf("warp.%s: unknown direction %v", name, dir))
	}
	if b != Zero && b != Clamp {
		panic(fmt.Sprintf("warp.%s: unknown border mode %v", name, b))
	}
	ni, np := s.N*s.C*s.H*s.W, s.N*s.H*s.W
	for _, v := range img {
		if v != nil && len(v) != ni {
			panic(fmt.Sprintf("warp.%s: image buffer has %d values, shape %+v needs %d", name, len(v), s, ni))
		}
	}
	for _, v := range pl {
		if v != nil && len(v) != np {
			panic(fmt.Sprintf("warp.%s: disparity or mask buffer has %d values, shape %+v needs %d", name, len(v), s, np))
		}
	}
}

// same reports whether a and b start at the same element.
func same(a, b []float32) bool { return len(a) > 0 && len(b) > 0 && &a[0] == &b[0] }

// tap says how one output pixel reads its source row: the sample is
// w0*row[j0] + w1*row[j1], and its derivative with respect to the disparity
// is e1*row[j1] - e0*row[j0]. Taps that fall outside the row under Zero get
// weight 0 and an index inside the row, so the channel loops need no
// branches; valid is 1 where 0 <= u <= W-1, else 0.
type tap struct {
	j0, j1         int32
	w0, w1, e0, e1 float32
	valid          float32
}

// locate sets t to the tap of output column x with disparity d; scale is
// dir*W. The product scale*d is rounded to float32 before x is added (the
// conversion forbids fusing the two into one multiply-add, which arm64,
// ppc64, s390x and riscv64 compilers do): a position meant to land exactly
// on a pixel, such as 1 − 5·(1/5), then gives the same u, validity and taps
// on every architecture. Forward and Backward share it, so they agree.
//
// At a kink (u an integer) the derivative is the one-sided one PyTorch 1.13
// grid_sample (align_corners=True) uses: taps floor(u) and floor(u)+1, and
// under Clamp a zero derivative at u <= 0 and u >= W-1, where the clamp
// holds. A NaN u gives a zero tap (output 0); u = ±Inf is clamped like any
// other far position.
func (t *tap) locate(x int, d float32, w int, scale float32, b Border) {
	u := float32(x) + float32(scale*d)
	fw := float32(w - 1)
	*t = tap{}
	if u >= 0 && u <= fw {
		t.valid = 1
	}
	if b == Clamp {
		du := scale
		if u <= 0 {
			u, du = 0, 0
		} else if u >= fw {
			u, du = fw, 0
		} else if u != u {
			return
		}
		if w == 1 {
			t.w0 = 1
			return
		}
		i := int(u)
		if i > w-2 {
			i = w - 2
		}
		a := u - float32(i)
		t.j0, t.j1 = int32(i), int32(i+1)
		t.w0, t.w1 = 1-a, a
		t.e0, t.e1 = du, du
		return
	}
	if !(u >= -1 && u <= float32(w)) {
		return // NaN, or both taps outside: output 0
	}
	i := -1 // floor(u), in [-1, W]
	if u >= 0 {
		i = int(u)
	}
	a := u - float32(i)
	j0, j1 := i, i+1
	w0, w1, e0, e1 := 1-a, a, scale, scale
	if i < 0 {
		j0, w0, e0 = 0, 0, 0
	}
	if j1 >= w {
		j1, w1, e1 = w-1, 0, 0
	}
	if j0 >= w {
		j0, w0, e0 = w-1, 0, 0
	}
	t.j0, t.j1 = int32(j0), int32(j1)
	t.w0, t.w1, t.e0, t.e1 = w0, w1, e0, e1
}

// chunk is the number of output pixels whose taps Forward and Backward
// compute at once, on the stack, before looping over the channels.
const chunk = 64

// Forward writes into dst the source images src sampled at the disparity
// disp in direction dir with border b, and, if mask is not nil, the validity
// of each sample (1 or 0). dst and src have N*C*H*W values, disp and mask
// N*H*W. Forward does not allocate. src is assumed finite (a NaN or Inf
// pixel may spread to neighbours that weight it by 0). It panics if s is
// not a valid shape, a slice length does not match s, dir or b is not a
// defined value, or dst starts at the same element as src.
func Forward(dst, mask, src, disp []float32, s Shape, dir Direction, b Border) {
	s.check("Forward", dir, b, [][]float32{dst, src}, [][]float32{disp, mask})
	if dst == nil || src == nil || disp == nil {
		panic("warp.Forward: nil buffer")
	}
	if same(dst, src) {
		panic("warp.Forward: dst aliases src")
	}
	scale := float32(dir) * float32(s.W)
	w, plane := s.W, s.H*s.W
	var taps [chunk]tap
	for n := 0; n < s.N; n++ {
		for y := 0; y < s.H; y++ {
			prow := (n*s.H + y) * w
			base := n*s.C*plane + y*w
			for x0 := 0; x0 < w; x0 += chunk {
				x1 := min(x0+chunk, w)
				ts := taps[:x1-x0]
				for k, d := range disp[prow+x0 : prow+x1] {
					ts[k].locate(x0+k, d, w, scale, b)
				}
				if mask != nil {
					m := mask[prow+x0 : prow+x1]
					for k := range m {
						m[k] = ts[k].valid
					}
				}
				for o := base; o < base+s.C*plane; o += plane {
					row := src[o : o+w]
					out := dst[o+x0 : o+x1]
					for k := range out {
						t := &ts[k]
						out[k] = t.w0*row[t.j0] + t.w1*row[t.j1]
					}
				}
			}
		}
	}
}

// Backward computes the gradients of a scalar loss with respect to the
// source images and the disparity, given gradDst, the gradient with respect
// to Forward's output for the same src, disp, dir and b. gradSrc (N*C*H*W
// values) and gradDisp (N*H*W values) are overwritten; either may be nil to
// skip it. Backward does not allocate. It panics if s is not a valid shape,
// a slice length does not match s, dir or b is not a defined value, or a
// gradient buffer starts at the same element as an input.
func Backward(gradSrc, gradDisp, gradDst, src, disp []float32, s Shape, dir Direction, b Border) {
	s.check("Backward", dir, b, [][]float32{gradSrc, gradDst, src}, [][]float32{gradDisp, disp})
	if gradDst == nil || src == nil || disp == nil {
		panic("warp.Backward: nil buffer")
	}
	if same(gradSrc, gradDst) || same(gradSrc, src) || same(gradDisp, disp) {
		panic("warp.Backward: a gradient buffer aliases an input")
	}
	if gradSrc != nil {
		clear(gradSrc)
	}
	// The loops over rows and chunks of taps are Forward's: the adjoint
	// walks the same taps. They stay two loops, not one walk with two
	// bodies, so that each inner loop is plain code over its own buffers.
	scale := float32(dir) * float32(s.W)
	w, plane := s.W, s.H*s.W
	var taps [chunk]tap
	var gd [chunk]float32
	for n := 0; n < s.N; n++ {
		for y := 0; y < s.H; y++ {
			prow := (n*s.H + y) * w
			base := n*s.C*plane + y*w
			for x0 := 0; x0 < w; x0 += chunk {
				x1 := min(x0+chunk, w)
				ts := taps[:x1-x0]
				for k, d := range disp[prow+x0 : prow+x1] {
					ts[k].locate(x0+k, d, w, scale, b)
				}
				gds := gd[:len(ts)]
				clear(gds)
				for o := base; o < base+s.C*plane; o += plane {
					row := src[o : o+w]
					g := gradDst[o+x0 : o+x1]
					if gradDisp != nil && gradSrc != nil {
						// Both gradients in one pass over the taps.
						grow := gradSrc[o : o+w]
						for k, gk := range g {
							t := &ts[k]
							j0, j1 := t.j0, t.j1
							gds[k] += gk * (t.e1*row[j1] - t.e0*row[j0])
							grow[j0] += gk * t.w0
							grow[j1] += gk * t.w1
						}
						continue
					}
					if gradDisp != nil {
						for k, gk := range g {
							t := &ts[k]
							gds[k] += gk * (t.e1*row[t.j1] - t.e0*row[t.j0])
						}
					}
					if gradSrc != nil {
						grow := gradSrc[o : o+w]
						for k, gk := range g {
							t := &ts[k]
							grow[t.j0] += gk * t.w0
							grow[t.j1] += gk * t.w1
						}
					}
				}
				if gradDisp != nil {
					copy(gradDisp[prow+x0:prow+x1], gds)
				}
			}
		}
	}
}
