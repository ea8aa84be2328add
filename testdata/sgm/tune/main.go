// Command tune scores the matcher over a folder of synthetic pairs (the
// layout of package synth: left/, right/, truth/disp_left/) with the options
// given as flags, densely over every pixel with ground truth, holes counted
// as disparity 0 and filled along the scan line. It is how the defaults of
// package sgm were chosen; run it on synthetic data only:
//
//	go run ./examples/synth -style greenhouse -n 50 -seed 77 -width 370 -height 250 -out /tmp/sgm_tune
//	go run ./testdata/sgm/tune -data /tmp/sgm_tune
package main

import (
	"context"
	"flag"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/sgm"
)

func main() {
	data := flag.String("data", "/tmp/sgm_tune", "folder of pairs")
	n := flag.Int("n", 50, "pairs to score")
	var o sgm.Options
	flag.IntVar(&o.MaxDisparity, "dmax", 63, "largest disparity")
	flag.IntVar(&o.CensusWidth, "cw", 0, "census width")
	flag.IntVar(&o.CensusHeight, "ch", 0, "census height")
	flag.IntVar(&o.P1, "p1", 0, "P1")
	flag.IntVar(&o.P2, "p2", 0, "P2")
	flag.Float64Var(&o.P2Falloff, "falloff", 0, "P2 falloff (-1 off)")
	flag.IntVar(&o.Paths, "paths", 0, "paths")
	flag.Float64Var(&o.Uniqueness, "uniq", 0, "uniqueness % (-1 off)")
	flag.IntVar(&o.LRTolerance, "lr", 0, "LR tolerance (-1 off)")
	flag.IntVar(&o.SpeckleSize, "speckle", 0, "speckle size (-1 off)")
	flag.Float64Var(&o.SpeckleJump, "jump", 0, "speckle jump")
	flag.Float64Var(&o.MinTexture, "tex", 0, "min texture (-1 off)")
	gain := flag.Float64("gain", 1, "multiply the right image's grey levels by this (exposure difference)")
	flag.Parse()
	if err := run(*data, *n, &o, *gain); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(dir string, n int, o *sgm.Options, gain float64) error {
	m, err := sgm.NewMatcher(o)
	if err != nil {
		return err
	}
	names, err := filepath.Glob(filepath.Join(dir, "left", "*.png"))
	if err != nil {
		return err
	}
	if len(names) > n {
		names = names[:n]
	}
	var zero, fill [2]float64 // EPE, bad-3 sums over pixels
	var pixels, valid int
	var elapsed time.Duration
	for _, ln := range names {
		base := strings.TrimSuffix(filepath.Base(ln), ".png")
		l, err := load(ln, 1)
		if err != nil {
			return err
		}
		r, err := load(filepath.Join(dir, "right", base+".png"), gain)
		if err != nil {
			return err
		}
		gt, w, h, _, err := depth.LoadPFM(filepath.Join(dir, "truth", "disp_left", base+".pfm"))
		if err != nil {
			return err
		}
		t := time.Now()
		res, err := m.Match(context.Background(), l, r)
		elapsed += time.Since(t)
		if err != nil {
			return err
		}
		valid += res.Disparity.Valid()
		filled := res.Disparity.Clone()
		if _, err := sgm.FillHoles(filled); err != nil {
			return err
		}
		for i, g := range gt[:w*h] {
			if math.IsInf(float64(g), 0) || math.IsNaN(float64(g)) {
				continue
			}
			pixels++
			for k, d := range []*depth.Disparity{res.Disparity, filled} {
				e := float64(g)
				if d.Mask[i] != 0 {
					e = math.Abs(float64(d.Pix[i] - g))
				}
				acc := &zero
				if k == 1 {
					acc = &fill
				}
				acc[0] += e
				if e > 3 {
					acc[1]++
				}
			}
		}
	}
	p := float64(pixels)
	fmt.Printf("pairs %d  valid %.1f%%  holes-as-0: EPE %.3f bad-3 %.2f%%  filled: EPE %.3f bad-3 %.2f%%  %.1f ms/pair\n",
		len(names), 100*float64(valid)/p, zero[0]/p, 100*zero[1]/p, fill[0]/p, 100*fill[1]/p,
		float64(elapsed.Microseconds())/1000/float64(len(names)))
	return nil
}

// load reads a PNG and converts it to grey, scaling the grey levels by gain.
func load(path string, gain float64) (*image.Gray, error) {
	img, err := dataset.LoadImage(path)
	if err != nil {
		return nil, err
	}
	b := img.Bounds()
	g := image.NewGray(b)
	for y := b.Min.Y; y < b.Max.Y; y++ {
		for x := b.Min.X; x < b.Max.X; x++ {
			r, gg, bl, _ := img.At(x, y).RGBA()
			v := (19595*r + 38470*gg + 7471*bl + 1<<15) >> 24
			g.Pix[g.PixOffset(x, y)] = uint8(min(255, math.Round(float64(v)*gain)))
		}
	}
	return g, nil
}
