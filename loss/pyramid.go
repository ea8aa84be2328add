package loss

import (
	"fmt"

	"github.com/parallaxdepth/parallax/planar"
)

// Downsample2 writes into dst the 2×2 area average of src (N*C*H*W values,
// shape s): dst has N*C*(H/2)*(W/2) values, and an odd last row or column
// of src is dropped. Averaging is right for disparities too, since they are
// fractions of the width and keep their value at every resolution. It
// panics if H or W is below 2 or a slice length does not match s.
func Downsample2(dst, src []float32, s Shape) {
	checkShape("Downsample2", s)
	if s.H < 2 || s.W < 2 {
		panic(fmt.Sprintf("loss.Downsample2: shape %+v is too small to halve", s))
	}
	h2, w2 := s.H/2, s.W/2
	checkLen("Downsample2", "src", src, s.N*s.C*s.H*s.W, s)
	checkLen("Downsample2", "dst", dst, s.N*s.C*h2*w2, s)
	for p := 0; p < s.N*s.C; p++ {
		in := src[p*s.H*s.W : (p+1)*s.H*s.W]
		out := dst[p*h2*w2 : (p+1)*h2*w2]
		for y := 0; y < h2; y++ {
			r0 := in[2*y*s.W : (2*y+1)*s.W]
			r1 := in[(2*y+1)*s.W : (2*y+2)*s.W]
			o := out[y*w2 : (y+1)*w2]
			for x := range o {
				o[x] = (r0[2*x] + r0[2*x+1] + r1[2*x] + r1[2*x+1]) * 0.25
			}
		}
	}
}

// Pyramid returns levels images: level 0 is im itself (not a copy) and each
// further level halves the previous one by 2×2 area averaging (Downsample2;
// an odd last row or column is dropped). It returns an error if im is nil
// or empty, levels is below 1, or a level would have fewer than one row or
// column.
func Pyramid(im *planar.Image, levels int) ([]*planar.Image, error) {
	if err := im.Check("image"); err != nil {
		return nil, fmt.Errorf("loss: pyramid: %w", err)
	}
	if levels < 1 {
		return nil, fmt.Errorf("loss: pyramid: %d levels requested, need at least 1", levels)
	}
	if levels > 1 && (im.H>>(levels-1) < 1 || im.W>>(levels-1) < 1) {
		return nil, fmt.Errorf("loss: pyramid: image %s is too small for %d levels", im.Shape(), levels)
	}
	out := make([]*planar.Image, levels)
	out[0] = im
	for l := 1; l < levels; l++ {
		prev := out[l-1]
		next := planar.New(prev.N, prev.C, prev.H/2, prev.W/2)
		Downsample2(next.Pix, prev.Pix, Shape{N: prev.N, C: prev.C, H: prev.H, W: prev.W})
		out[l] = next
	}
	return out, nil
}
