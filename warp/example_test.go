package warp_test

import (
	"fmt"

	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// A right view whose content sits one pixel to the left of the left view's
// is warped back by a disparity of one pixel (1/W as a fraction of the
// width). The first column has no source pixel: its mask is 0, and with
// the Zero border its value fades to 0.
func ExampleWarp() {
	const w = 5
	right := planar.New(1, 1, 1, w)
	copy(right.Pix, []float32{0.2, 0.4, 0.6, 0.8, 1.0})
	disp := planar.New(1, 1, 1, w)
	for i := range disp.Pix {
		disp.Pix[i] = 1.0 / w
	}
	left, mask, err := warp.Warp(right, disp, warp.RebuildLeft, warp.Zero)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("rebuilt left %.1f\n", left.Pix)
	fmt.Println("mask", mask.Pix)

	// Disparity 0.5 px: halfway between neighbours.
	for i := range disp.Pix {
		disp.Pix[i] = 0.5 / w
	}
	left, _, _ = warp.Warp(right, disp, warp.RebuildLeft, warp.Clamp)
	fmt.Printf("half pixel   %.1f\n", left.Pix)

	_, _, err = warp.Warp(right, planar.New(1, 1, 2, w), warp.RebuildLeft, warp.Zero)
	fmt.Println(err)
	// Output:
	// rebuilt left [0.0 0.2 0.4 0.6 0.8]
	// mask [0 1 1 1 1]
	// half pixel   [0.2 0.3 0.5 0.7 0.9]
	// warp: disparity shape 1x1x2x5 does not match source image shape 1x1x1x5
}
