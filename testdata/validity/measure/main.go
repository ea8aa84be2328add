// Command measure is how the defaults of model.ValidityOptions were chosen:
// it runs the embedded default weights over held-out synthetic greenhouse
// pairs (seeds the default weights were never trained on) with every
// validity rule off, and reports, for each confidence and texture
// threshold, the share of pixels kept and the share of bad pixels
// (|d − d_true| > 3 px) removed, over the pixels with ground truth. It also
// reports what the rules do on a uniform, a black and a noise image.
//
//	go run ./examples/synth -style greenhouse -n 100 -seed 1001 -out /tmp/gh_test
//	go run ./testdata/validity/measure -data /tmp/gh_test
package main

import (
	"context"
	"flag"
	"fmt"
	"image"
	"image/color"
	"math"
	"math/rand/v2"
	"os"
	"sort"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
)

type pixel struct {
	conf, tex float32
	bad       bool // |d − truth| > 3 px
	inRange   bool // the estimate's depth lies in the rig's range
}

func main() {
	data := flag.String("data", "/tmp/gh_test", "folder of held-out pairs")
	flag.IntVar(&radius, "radius", model.TextureRadius, "texture window radius")
	flag.Parse()
	if err := run(*data); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

var radius int

var off = model.ValidityOptions{MinConfidence: model.ValidityOff, MinTexture: model.ValidityOff, KeepOutOfRange: true}

func run(dir string) error {
	set, err := dataset.Open(dir)
	if err != nil {
		return err
	}
	if !set.Has(dataset.DispLeft) || set.Rig == nil {
		return fmt.Errorf("measure: %s needs disp_left truth and a rig", dir)
	}
	est, err := model.NewEstimator(nil, &model.EstimatorOptions{Validity: off})
	if err != nil {
		return err
	}
	const nw, nh = 256, 128 // NetworkSize keeps this size, so the texture below is the estimator's
	var px []pixel
	for i := range set.Pairs {
		r, err := set.Read(i)
		if err != nil {
			return err
		}
		b := r.Left.Bounds()
		if b.Dx() != nw || b.Dy() != nh {
			return fmt.Errorf("measure: pair %s is %dx%d, want the network's %dx%d", r.Name, b.Dx(), b.Dy(), nw, nh)
		}
		e, err := est.Estimate(context.Background(), r.Left)
		if err != nil {
			return err
		}
		tex, err := texture(r.Left)
		if err != nil {
			return err
		}
		rig := set.Rig
		for y := range b.Dy() {
			for x := range b.Dx() {
				t, ok := r.DispLeft.At(x, y)
				if !ok {
					continue
				}
				d, _ := e.Disparity.At(x, y) // invalid: 0
				c, _ := e.Confidence.At(x, y)
				z, zok := rig.DepthFromPixels(float64(d))
				px = append(px, pixel{conf: c, tex: tex[y*b.Dx()+x], bad: math.Abs(float64(d-t)) > 3,
					inRange: zok && z >= rig.MinDepth && z <= rig.MaxDepth})
			}
		}
	}
	nbad := 0
	for _, p := range px {
		if p.bad {
			nbad++
		}
	}
	fmt.Printf("%d pairs, %d pixels with truth, %d (%.2f %%) off by more than 3 px\n\n", len(set.Pairs), len(px), nbad, 100*float64(nbad)/float64(len(px)))
	report := func(name string, keep func(p pixel) bool) {
		kept, badGone := 0, 0
		for _, p := range px {
			if keep(p) {
				kept++
			} else if p.bad {
				badGone++
			}
		}
		fmt.Printf("%-34s kept %6.2f %%   bad removed %6.2f %%   bad among kept %5.2f %%\n", name,
			100*float64(kept)/float64(len(px)), 100*float64(badGone)/float64(max(nbad, 1)),
			100*float64(nbad-badGone)/float64(max(kept, 1)))
	}
	report("range only", func(p pixel) bool { return p.inRange })
	for _, c := range []float32{0.02, 0.05, 0.1, 0.15, 0.2, 0.25, 0.3, 0.35, 0.4, 0.5, 0.6} {
		report(fmt.Sprintf("range + confidence ≥ %.2f", c), func(p pixel) bool { return p.inRange && p.conf >= c })
	}
	fmt.Printf("texture window radius %d\n", radius)
	for _, t := range []float32{0.002, 0.003, 0.004, 0.005, 0.0075, 0.01, 0.02} {
		report(fmt.Sprintf("texture ≥ %.3f", t), func(p pixel) bool { return p.tex >= t })
	}
	for _, t := range []float32{0.002, 0.003, 0.004, 0.005, 0.0075, 0.01} {
		for _, c := range []float32{0.05, 0.1, 0.2, 0.3} {
			report(fmt.Sprintf("range + conf ≥ %.2f + tex ≥ %.4f", c, t), func(p pixel) bool { return p.inRange && p.conf >= c && p.tex >= t })
		}
	}
	report("the defaults", func(p pixel) bool {
		return p.inRange && p.conf >= model.DefaultMinConfidence && p.tex >= model.DefaultMinTexture
	})
	fmt.Println()
	quantiles("confidence of all pixels", px, func(p pixel) float32 { return p.conf })
	quantiles("texture of all pixels", px, func(p pixel) float32 { return p.tex })

	fmt.Println("\nhand-made images at the network's size, every rule off:")
	rng := rand.New(rand.NewPCG(1, 2))
	for _, c := range []struct {
		name string
		fill func(x, y int) color.RGBA
	}{
		{"uniform grey 128", func(x, y int) color.RGBA { return color.RGBA{128, 128, 128, 255} }},
		{"uniform green", func(x, y int) color.RGBA { return color.RGBA{60, 140, 50, 255} }},
		{"black", func(x, y int) color.RGBA { return color.RGBA{0, 0, 0, 255} }},
		{"dark, 2 grey levels of noise", func(x, y int) color.RGBA { v := uint8(3 + rng.IntN(3)); return color.RGBA{v, v, v, 255} }},
		{"uniform noise 0..255", func(x, y int) color.RGBA {
			return color.RGBA{uint8(rng.IntN(256)), uint8(rng.IntN(256)), uint8(rng.IntN(256)), 255}
		}},
	} {
		img := image.NewRGBA(image.Rect(0, 0, nw, nh))
		for y := range nh {
			for x := range nw {
				img.SetRGBA(x, y, c.fill(x, y))
			}
		}
		e, err := est.Estimate(context.Background(), img)
		if err != nil {
			return err
		}
		tex, err := texture(img)
		if err != nil {
			return err
		}
		var hp []pixel
		for i, v := range e.Confidence.Pix {
			hp = append(hp, pixel{conf: v, tex: tex[i]})
		}
		quantiles(c.name+": confidence", hp, func(p pixel) float32 { return p.conf })
		quantiles(c.name+": texture", hp, func(p pixel) float32 { return p.tex })
	}
	return nil
}

func texture(img image.Image) ([]float32, error) {
	in, err := planar.FromImage(img)
	if err != nil {
		return nil, err
	}
	t := make([]float32, in.H*in.W)
	model.LocalContrast(t, in, radius)
	return t, nil
}

func quantiles(name string, px []pixel, f func(pixel) float32) {
	v := make([]float64, len(px))
	for i, p := range px {
		v[i] = float64(f(p))
	}
	sort.Float64s(v)
	q := func(p float64) float64 { return v[int(p*float64(len(v)-1))] }
	fmt.Printf("%-48s p1 %.4f  p5 %.4f  p10 %.4f  p50 %.4f  p90 %.4f  max %.4f\n", name, q(0.01), q(0.05), q(0.1), q(0.5), q(0.9), v[len(v)-1])
}
