package dataset_test

import (
	"fmt"

	"github.com/parallaxdepth/parallax/dataset"
)

func Example() {
	set, err := dataset.Open("../testdata/synth/greenhouse")
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println("pairs:", len(set.Pairs), "truth:", set.Truth, "rig:", set.Rig != nil)
	r, err := set.Read(0)
	if err != nil {
		fmt.Println(err)
		return
	}
	z, _ := r.DepthLeft.At(128, 64)
	fmt.Printf("%s: %v, depth at the centre %.2f m\n", r.Name, r.Left.Bounds().Size(), z)
	// Output:
	// pairs: 3 truth: [disp_left disp_right depth_left occ_left occ_right] rig: true
	// 000000: (256,128), depth at the centre 2.76 m
}
