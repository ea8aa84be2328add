package depth_test

import (
	"bytes"
	"fmt"
	"image"
	"log"
	"os"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
)

// The Middlebury 2014 Motorcycle calibration at the quarter-size images of
// scikit-image 0.19.3 (skimage.data.stereo_motorcycle docstring).
const motorcycleJSON = `{
  "format": "parallax-rig",
  "version": 2,
  "width_px": 741,
  "height_px": 500,
  "fx_px": 994.978,
  "fy_px": 994.978,
  "cx_px": 311.193,
  "cy_px": 254.877,
  "baseline_m": 0.193001,
  "delta_cx_px": 31.086,
  "min_depth_m": 0.5,
  "max_depth_m": 10
}`

func ExampleReadRig() {
	rig, err := depth.ReadRig(strings.NewReader(motorcycleJSON))
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%dx%d, f = %.3f px, B = %.1f mm\n", rig.Width, rig.Height, rig.Fx, rig.Baseline*1000)

	_, err = depth.ReadRig(strings.NewReader(strings.Replace(motorcycleJSON, "0.193001", "0", 1)))
	fmt.Println(err)
	// Output:
	// 741x500, f = 994.978 px, B = 193.0 mm
	// depth: rig baseline_m is 0: it must be positive and finite
}

func ExampleRig_DepthFromPixels() {
	rig, _ := depth.ReadRig(strings.NewReader(motorcycleJSON))
	z, ok := rig.DepthFromPixels(48.9999)
	fmt.Printf("%.2f mm %v\n", z*1000, ok)
	_, ok = rig.DepthFromPixels(0)
	fmt.Println("zero disparity valid:", ok)
	// Output:
	// 2397.82 mm true
	// zero disparity valid: false
}

func ExampleRig_Scaled() {
	rig, _ := depth.ReadRig(strings.NewReader(motorcycleJSON))
	// A network sees the images at 370 × 250 and predicts 0.0661 of the
	// width; the same fraction is 48.98 px at full size, and both give the same
	// depth once the rig is rescaled.
	small, err := rig.Scaled(370, 250)
	if err != nil {
		log.Fatal(err)
	}
	const frac = 0.0661
	zSmall, _ := small.DepthFromPixels(depth.FractionToPixels(frac, small.Width))
	zFull, _ := rig.DepthFromPixels(depth.FractionToPixels(frac, rig.Width))
	fmt.Printf("fx = %.2f px, Δcx = %.3f px\n", small.Fx, small.DeltaCx)
	fmt.Printf("%.4f m at 370 px, %.4f m at 741 px\n", zSmall, zFull)
	// Output:
	// fx = 496.82 px, Δcx = 15.522 px
	// 2.3984 m at 370 px, 2.3984 m at 741 px
}

func ExampleDepthErrors() {
	gt, _ := depth.NewDepth(image.Rect(0, 0, 4, 1))
	est, _ := depth.NewDepth(image.Rect(0, 0, 4, 1))
	for x, v := range []float32{1, 2, 4, 8} {
		gt.Set(x, 0, v)
	}
	for x, v := range []float32{2, 5, 8, 0} { // 0: no estimate
		est.Set(x, 0, v)
	}
	// Ratios ẑ/z are 2, 2.5, 2; median scaling by 2/5 brings them to 0.8, 1,
	// 0.8, and δ < 1.25 is strict, so a ratio of exactly 1.25 misses it.
	plain, _ := depth.DepthErrors(est, gt, nil)
	scaled, _ := depth.DepthErrors(est, gt, &depth.DepthOptions{MedianScale: true})
	var s depth.Summary
	s.AddDepth("raw", plain)
	s.AddDepth("median-scaled", scaled)
	fmt.Print(s.String())
	fmt.Printf("scale %.2f\n", scaled.Scale)
	// Output:
	// name           pixels  abs_rel  sq_rel    rmse  rmse_log  delta_1.25  delta_1.25^2  delta_1.25^3
	// raw                 3   1.1667  3.1667  2.9439    0.7747      0.0000        0.0000        0.0000
	// median-scaled       3   0.1333  0.0667  0.4761    0.1822      0.3333        1.0000        1.0000
	// scale 0.40
}

func ExampleDisparityErrors() {
	gt, _ := depth.NewDisparity(image.Rect(0, 0, 4, 1))
	est, _ := depth.NewDisparity(image.Rect(0, 0, 4, 1))
	for x, v := range []float32{10, 20, 30, 40} {
		gt.Set(x, 0, v)
	}
	for x, v := range []float32{10.5, 21.5, 33, 40} {
		est.Set(x, 0, v)
	}
	m, _ := depth.DisparityErrors(est, gt)
	var s depth.Summary
	s.AddDisparity("example", m)
	s.WriteCSV(os.Stdout)
	// Output:
	// name,pixels,epe_px,bad1,bad2,bad3
	// example,4,1.25,0.5,0.25,0
}

func ExampleWritePFM() {
	var buf bytes.Buffer
	pix := []float32{1, 2, 3, 4, 5, 6} // 3 × 2, top row first
	if err := depth.WritePFM(&buf, pix, 3, 2, 1); err != nil {
		log.Fatal(err)
	}
	back, w, h, c, err := depth.ReadPFM(&buf)
	fmt.Println(back, w, h, c, err)
	// Output:
	// [1 2 3 4 5 6] 3 2 1 <nil>
}

func ExampleWritePNG16() {
	z, _ := depth.NewDepth(image.Rect(0, 0, 3, 1))
	z.Set(0, 0, 1.2344) // 1234 mm
	z.Set(1, 0, 80)     // beyond 65.535 m: stored as 0 (invalid), counted
	var buf bytes.Buffer
	dropped, err := depth.WritePNG16(&buf, z)
	if err != nil {
		log.Fatal(err)
	}
	back, _ := depth.ReadPNG16(&buf)
	v, ok := back.At(0, 0)
	_, ok1 := back.At(1, 0)
	fmt.Println(dropped, v, ok, ok1)
	// Output:
	// 1 1.234 true false
}

func ExamplePointCloud_WritePLY() {
	rig := &depth.Rig{Width: 2, Height: 1, Baseline: 0.1, Fx: 100, Fy: 100, Cx: 0.5, Cy: 0, MaxDepth: 10}
	z, _ := depth.NewDepth(image.Rect(0, 0, 2, 1))
	z.Set(0, 0, 2)
	z.Set(1, 0, 4)
	pc, err := depth.PointCloudFromDepth(z, nil, rig)
	if err != nil {
		log.Fatal(err)
	}
	pc.WritePLY(os.Stdout, depth.PLYASCII)
	// Output:
	// ply
	// format ascii 1.0
	// comment parallax depth point cloud, metres, x right y down z forward
	// element vertex 2
	// property float x
	// property float y
	// property float z
	// end_header
	// -0.01 0 2
	// 0.02 0 4
}

func ExampleCubehelix_Color() {
	for _, lambda := range []float64{0, 0.5, 1} {
		fmt.Println(depth.DefaultCubehelix.Color(lambda))
	}
	// Output:
	// {0 0 0 255}
	// {196 112 109 255}
	// {255 255 255 255}
}
