package warp

import (
	"fmt"

	"github.com/parallaxdepth/parallax/planar"
)

// Warp samples the images src at the disparity disp in direction dir and
// returns the warped images and their validity masks (N×1×H×W, 1 = the sample
// fell inside the source image). It returns an error naming the problem if
// an argument is nil or empty, the shapes disagree, disp does not have one
// channel, dir or b is not one of the defined values, or disp or src holds
// NaN or Inf.
func Warp(src, disp *planar.Image, dir Direction, b Border) (out, mask *planar.Image, err error) {
	s, err := checkArgs(src, disp, dir, b)
	if err != nil {
		return nil, nil, err
	}
	out = planar.New(s.N, s.C, s.H, s.W)
	mask = planar.New(s.N, 1, s.H, s.W)
	Forward(out.Pix, mask.Pix, src.Pix, disp.Pix, s, dir, b)
	return out, mask, nil
}

func checkArgs(src, disp *planar.Image, dir Direction, b Border) (Shape, error) {
	if err := src.Check("source image"); err != nil {
		return Shape{}, fmt.Errorf("warp: %w", err)
	}
	if err := disp.Check("disparity"); err != nil {
		return Shape{}, fmt.Errorf("warp: %w", err)
	}
	if disp.C != 1 {
		return Shape{}, fmt.Errorf("warp: disparity must have 1 channel, has %d", disp.C)
	}
	if disp.N != src.N || disp.H != src.H || disp.W != src.W {
		return Shape{}, fmt.Errorf("warp: disparity shape %s does not match source image shape %s", disp.Shape(), src.Shape())
	}
	if dir != RebuildLeft && dir != RebuildRight {
		return Shape{}, fmt.Errorf("warp: unknown direction %v", dir)
	}
	if b != Zero && b != Clamp {
		return Shape{}, fmt.Errorf("warp: unknown border mode %v", b)
	}
	if err := disp.CheckFinite("disparity"); err != nil {
		return Shape{}, fmt.Errorf("warp: %w", err)
	}
	if err := src.CheckFinite("source image"); err != nil {
		return Shape{}, fmt.Errorf("warp: %w", err)
	}
	return Shape{N: src.N, C: src.C, H: src.H, W: src.W}, nil
}
