// Command compare runs package sgm on one rectified pair the way
// testdata/sgm/compare.py runs OpenCV's StereoSGBM, and prints one JSON line:
// its accuracy against the ground truth, scored densely over every pixel
// with ground truth (holes counted as disparity 0, and holes filled along the
// scan line), and the median wall time of a call with its buffers reused.
//
//	go run ./testdata/sgm/compare -left L.png -right R.png -truth D.pfm -dmax 47
package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"image"
	"math"
	"os"
	"runtime"
	"slices"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/sgm"
)

func main() {
	left := flag.String("left", "", "left image (PNG)")
	right := flag.String("right", "", "right image (PNG)")
	truth := flag.String("truth", "", "left ground-truth disparity (PFM, pixels, +Inf unknown)")
	dmax := flag.Int("dmax", 47, "largest disparity searched")
	runs := flag.Int("runs", 30, "timed calls")
	flag.Parse()
	if err := run(*left, *right, *truth, *dmax, *runs); err != nil {
		fmt.Fprintln(os.Stderr, "compare:", err)
		os.Exit(1)
	}
}

func run(lp, rp, tp string, dmax, runs int) error {
	l, err := dataset.LoadImage(lp)
	if err != nil {
		return err
	}
	r, err := dataset.LoadImage(rp)
	if err != nil {
		return err
	}
	pix, w, h, _, err := depth.LoadPFM(tp)
	if err != nil {
		return err
	}
	gt, err := depth.NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		return err
	}
	for i, v := range pix {
		if !math.IsInf(float64(v), 0) {
			gt.Set(i%w, i/w, v)
		}
	}
	m, err := sgm.NewMatcher(&sgm.Options{MaxDisparity: dmax})
	if err != nil {
		return err
	}
	// Grey once, as OpenCV's script reads its images once.
	lg, rg := toGray(l), toGray(r)
	ctx := context.Background()
	var res sgm.Result
	if err := m.MatchInto(ctx, &res, lg, rg); err != nil {
		return err
	}
	times := make([]float64, runs)
	for i := range times {
		t := time.Now()
		if err := m.MatchInto(ctx, &res, lg, rg); err != nil {
			return err
		}
		times[i] = float64(time.Since(t).Microseconds()) / 1000
	}
	slices.Sort(times)
	valid := res.Disparity.Valid()
	zero := res.Disparity.Clone()
	if _, err := sgm.ZeroHoles(zero); err != nil {
		return err
	}
	filled := res.Disparity.Clone()
	if _, err := sgm.FillHoles(filled); err != nil {
		return err
	}
	if _, err := sgm.ZeroHoles(filled); err != nil {
		return err
	}
	mz, err := depth.DisparityErrors(zero, gt)
	if err != nil {
		return err
	}
	mf, err := depth.DisparityErrors(filled, gt)
	if err != nil {
		return err
	}
	return json.NewEncoder(os.Stdout).Encode(map[string]any{
		"width": w, "height": h, "disparities": dmax + 1, "threads": runtime.GOMAXPROCS(0),
		"valid": float64(valid) / float64(w*h), "pixels": mz.N,
		"epe_zero": mz.EPE, "bad3_zero": mz.Bad3, "epe_filled": mf.EPE, "bad3_filled": mf.Bad3,
		"ms_median": times[len(times)/2], "ms_min": times[0],
	})
}

func toGray(img image.Image) *image.Gray {
	b := img.Bounds()
	g := image.NewGray(b)
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			g.Set(x, y, img.At(x, y))
		}
	}
	return g
}
