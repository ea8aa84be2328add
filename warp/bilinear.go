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

func (s Shape) check(name string, dst, src, disp, mask []float32, needMask bool) {
	if s.N <= 0 || s.C <= 0 || s.H <= 0 || s.W <= 0 {
		panic(fmt.Sprintf("warp.%s: invalid shape %+v", name, s))
	}
	img := s.N * s.C * s.H * s.W
	pl := s.N * s.H * s.W
	if dst != nil && len(dst) != img {
		panic(fmt.Sprintf("warp.%s: image buffer has %d values, shape %+v needs %d", name, len(dst), s, img))
	}
	if src != nil && len(src) != img {
		panic(fmt.Sprintf("warp.%s: source has %d values, shape %+v needs %d", name, len(src), s, img))
	}
	if len(disp) != pl {
		panic(fmt.Sprintf("warp.%s: disparity has %d values, shape %+v needs %d", name, len(disp), s, pl))
	}
	if (mask != nil || needMask) && len(mask) != pl {
		panic(fmt.Sprintf("warp.%s: mask has %d values, shape %+v needs %d", name, len(mask), s, pl))
	}
}

// tap describes where one output pixel samples its row: the two source
// columns i0 and i1 = i0+1, the weight a of i1, whether each tap is inside
// the row (for Zero), and the derivative of the sample position u with
// respect to the disparity (0 where Clamp clamped it).
type tap struct {
	i0, i1   int
	a        float32
	ok0, ok1 bool
	valid    bool
	du       float32
}

// locate computes the taps for output column x with disparity d.
func locate(x int, d float32, w int, scale float32, b Border) tap {
	u := float32(x) + scale*d
	fw := float32(w - 1)
	var t tap
	if u != u || math.IsInf(float64(u), 0) {
		return t // non-finite: output 0, mask 0, no gradient
	}
	t.valid = u >= 0 && u <= fw
	t.du = scale
	if b == Clamp {
		if u < 0 {
			u, t.du = 0, 0
		} else if u > fw {
			u, t.du = fw, 0
		}
		i := int(u)
		if i > w-2 {
			i = w - 2
		}
		if i < 0 { // w == 1
			t.i0, t.i1, t.a, t.ok0, t.du = 0, 0, 0, true, 0
			return t
		}
		t.i0, t.i1, t.a = i, i+1, u-float32(i)
		t.ok0, t.ok1 = true, true
		return t
	}
	if u <= -1 || u >= float32(w) {
		t.du = 0
		return t // both taps outside: output 0
	}
	f := float32(math.Floor(float64(u)))
	i := int(f)
	t.i0, t.i1, t.a = i, i+1, u-f
	t.ok0 = i >= 0 && i < w
	t.ok1 = i+1 >= 0 && i+1 < w
	return t
}

// Forward writes into dst the source images src sampled at the disparity
// disp in direction dir, and, if mask is not nil, the validity of each
// sample (1 or 0). dst and src have N*C*H*W values, disp and mask N*H*W.
// Forward does not allocate. It panics if a slice length does not match s
// or dst aliases src.
func Forward(dst, mask, src, disp []float32, s Shape, dir Direction, b Border) {
	s.check("Forward", dst, src, disp, mask, false)
	if len(dst) > 0 && &dst[0] == &src[0] {
		panic("warp.Forward: dst aliases src")
	}
	scale := float32(dir) * float32(s.W)
	plane := s.H * s.W
	for n := 0; n < s.N; n++ {
		for y := 0; y < s.H; y++ {
			drow := disp[(n*s.H+y)*s.W : (n*s.H+y+1)*s.W]
			for x, d := range drow {
				t := locate(x, d, s.W, scale, b)
				if mask != nil {
					if t.valid {
						mask[(n*s.H+y)*s.W+x] = 1
					} else {
						mask[(n*s.H+y)*s.W+x] = 0
					}
				}
				for c := 0; c < s.C; c++ {
					row := src[(n*s.C+c)*plane+y*s.W : (n*s.C+c)*plane+(y+1)*s.W]
					var v float32
					if t.ok0 {
						v = (1 - t.a) * row[t.i0]
					}
					if t.ok1 {
						v += t.a * row[t.i1]
					}
					dst[(n*s.C+c)*plane+y*s.W+x] = v
				}
			}
		}
	}
}

// Backward computes the gradients of a scalar loss with respect to the
// source images and the disparity, given gradDst, the gradient with respect
// to Forward's output. gradSrc (N*C*H*W values) and gradDisp (N*H*W values)
// are overwritten; either may be nil to skip it. Backward does not
// allocate. It panics if a slice length does not match s.
func Backward(gradSrc, gradDisp, gradDst, src, disp []float32, s Shape, dir Direction, b Border) {
	s.check("Backward", gradDst, src, disp, nil, false)
	if gradSrc != nil && len(gradSrc) != len(src) {
		panic(fmt.Sprintf("warp.Backward: source gradient has %d values, shape %+v needs %d", len(gradSrc), s, len(src)))
	}
	if gradDisp != nil && len(gradDisp) != len(disp) {
		panic(fmt.Sprintf("warp.Backward: disparity gradient has %d values, shape %+v needs %d", len(gradDisp), s, len(disp)))
	}
	if gradSrc != nil {
		clear(gradSrc)
	}
	scale := float32(dir) * float32(s.W)
	plane := s.H * s.W
	for n := 0; n < s.N; n++ {
		for y := 0; y < s.H; y++ {
			drow := disp[(n*s.H+y)*s.W : (n*s.H+y+1)*s.W]
			for x, d := range drow {
				t := locate(x, d, s.W, scale, b)
				var gd float32
				for c := 0; c < s.C; c++ {
					off := (n*s.C+c)*plane + y*s.W
					g := gradDst[off+x]
					var v0, v1 float32
					if t.ok0 {
						v0 = src[off+t.i0]
						if gradSrc != nil {
							gradSrc[off+t.i0] += g * (1 - t.a)
						}
					}
					if t.ok1 {
						v1 = src[off+t.i1]
						if gradSrc != nil {
							gradSrc[off+t.i1] += g * t.a
						}
					}
					gd += g * (v1 - v0)
				}
				if gradDisp != nil {
					gradDisp[(n*s.H+y)*s.W+x] = gd * t.du
				}
			}
		}
	}
}
