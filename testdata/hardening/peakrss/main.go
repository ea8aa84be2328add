// Command peakrss estimates depth once for one large image, so that
// /usr/bin/time -v can report the peak resident memory of the library path
// (testdata/hardening/peak_rss.sh runs it). The image is the bundled demo
// image scaled up to -width × -height; the rig is the demo rig scaled to it
// (so depth is computed too). It prints the network size, the scratch the
// Estimator counts for one worker and the Go heap's figures. With -png
// FILE it writes the image and its rig (FILE's name with .rig.json) and
// stops, for the estimate command.
package main

import (
	"context"
	"flag"
	"fmt"
	"image"
	"image/png"
	"os"
	"runtime"
	"strings"

	xdraw "golang.org/x/image/draw"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
)

func main() {
	width := flag.Int("width", 4000, "image width in pixels")
	height := flag.Int("height", 3000, "image height in pixels")
	flip := flag.Bool("flip", false, "flip post-processing (a second forward pass)")
	pngPath := flag.String("png", "", "write the image as a PNG and its rig beside it, then stop")
	flag.Parse()
	if err := run(*width, *height, *flip, *pngPath); err != nil {
		fmt.Fprintln(os.Stderr, "peakrss:", err)
		os.Exit(1)
	}
}

func run(width, height int, flip bool, pngPath string) error {
	small, err := demo.Left()
	if err != nil {
		return err
	}
	img := image.NewRGBA(image.Rect(0, 0, width, height))
	xdraw.ApproxBiLinear.Scale(img, img.Rect, small, small.Bounds(), xdraw.Src, nil)
	rig, err := demo.Rig()
	if err != nil {
		return err
	}
	if rig, err = rig.Stretched(width, height); err != nil {
		return err
	}
	if pngPath != "" {
		return writeInputs(pngPath, img, rig)
	}
	est, err := model.NewEstimator(nil, &model.EstimatorOptions{Rig: rig, Flip: flip, MaxWorkers: 1})
	if err != nil {
		return err
	}
	e, err := est.Estimate(context.Background(), img)
	if err != nil {
		return err
	}
	nw, nh, _ := est.NetworkSize(width, height)
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	fmt.Printf("%dx%d image, network %dx%d, flip %v: one worker counted at %.1f MiB; Go heap in use %.1f MiB, obtained from the OS %.1f MiB; depth map %v\n",
		width, height, nw, nh, flip, float64(est.WorkerBytes())/(1<<20), float64(ms.HeapInuse)/(1<<20), float64(ms.HeapSys)/(1<<20), e.Depth.Bounds())
	return nil
}

func writeInputs(path string, img image.Image, rig *depth.Rig) error {
	f, err := os.Create(path)
	if err != nil {
		return err
	}
	if err := png.Encode(f, img); err != nil {
		f.Close()
		return err
	}
	if err := f.Close(); err != nil {
		return err
	}
	r, err := os.Create(strings.TrimSuffix(path, ".png") + ".rig.json")
	if err != nil {
		return err
	}
	if err := rig.Write(r); err != nil {
		r.Close()
		return err
	}
	return r.Close()
}
