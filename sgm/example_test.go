package sgm_test

import (
	"context"
	"fmt"
	"image"
	"math"

	"github.com/parallaxdepth/parallax/sgm"
)

// A textured wall seen by both cameras 12 pixels apart: the matcher finds
// the disparity everywhere its match lies inside the right image.
func Example() {
	const w, h, d = 96, 48, 12
	texture := func(x, y float64) uint8 {
		return uint8(128 + 50*math.Sin(0.9*x+0.3*y) + 40*math.Sin(0.37*x-0.81*y+1))
	}
	left := image.NewGray(image.Rect(0, 0, w, h))
	right := image.NewGray(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			left.Pix[y*w+x] = texture(float64(x), float64(y))
			right.Pix[y*w+x] = texture(float64(x+d), float64(y)) // right(x−d) = left(x)
		}
	}
	m, err := sgm.NewMatcher(&sgm.Options{MaxDisparity: 31})
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := m.Match(context.Background(), left, right)
	if err != nil {
		fmt.Println(err)
		return
	}
	v, ok := res.Disparity.At(60, 24)
	fmt.Printf("disparity at (60, 24): %.0f px, valid %v\n", v, ok)
	_, ok = res.Disparity.At(3, 24)
	fmt.Printf("at (3, 24), whose match lies outside the right image: valid %v\n", ok)
	// Output:
	// disparity at (60, 24): 12 px, valid true
	// at (3, 24), whose match lies outside the right image: valid false
}
