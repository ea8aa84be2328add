// Command lossvsepe plays the 2-minute storage drive of the README (greenhouse:40,storage:1200 at
// 320x240, a step every fifth frame, seed 1) and prints per block the EPE and the self-supervised
// objective (every fifth frame) of the fixed and of the adapted weights: whether the objective the
// adapter's check reads tracks the depth error. Its output of 2026-12-02 (built at commit c7d2e41, the size fix,
// before Options.MinGain, which the output motivates) is output.txt.
//
//	go run ./examples/adaptdrive/results/lossvsepe
package main

import (
	"context"
	"errors"
	"fmt"
	"image"
	"os"

	xdraw "golang.org/x/image/draw"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/synth"
)

func toPlanar(img image.Image, w, h int) *planar.Image {
	dst := image.NewRGBA64(image.Rect(0, 0, w, h))
	xdraw.CatmullRom.Scale(dst, dst.Rect, img, img.Bounds(), xdraw.Src, nil)
	p := planar.New(1, 3, h, w)
	if err := planar.FromImageInto(p, dst); err != nil {
		panic(err)
	}
	return p
}

func main() {
	ctx := context.Background()
	w, _ := model.Default()
	opts := &model.EstimatorOptions{Validity: model.ValidityOptions{MinConfidence: model.ValidityOff, MinTexture: model.ValidityOff}}
	fixed, _ := model.NewEstimator(w, opts)
	live, _ := model.NewEstimator(w, opts)
	ad, err := adapt.New(live, &adapt.Options{Seed: 1})
	if err != nil {
		panic(err)
	}
	nw, nh, _ := live.NetworkSize(320, 240)
	c := w.Config
	c.Width, c.Height = nw, nh
	sess, err := train.NewSession(&model.Weights{Config: c, Params: w.Params}, 1, nil, nil)
	if err != nil {
		panic(err)
	}
	lossOf := func(ws *model.Weights, l, r *planar.Image) float64 {
		if err := sess.SetWeights(&model.Weights{Config: c, Params: ws.Params}); err != nil {
			panic(err)
		}
		t, err := sess.Forward(l, r)
		sess.ClearGradients()
		if err != nil {
			panic(err)
		}
		return t.Total
	}
	ls, _ := synth.ParseLegs("greenhouse:40,storage:1200")
	d := &synth.Drive{Legs: ls, Seed: 1}
	render := &synth.Options{Width: 320, Height: 240, Samples: 1}
	var se [2]float64
	var sl [2]float64
	n, nl := 0, 0
	owed := 0.0
	fmt.Println("frames epe_fixed epe_adapted loss_fixed loss_adapted swaps refused serving_loss cand_loss")
	for f := range d.Frames() {
		p, err := synth.GenerateFrame(d, f, render)
		if err != nil {
			panic(err)
		}
		left, right := p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)
		gt, _ := depth.NewDisparity(image.Rect(0, 0, 320, 240))
		for i, v := range p.DispLeft.Pix[:320*240] {
			if v > 0 {
				gt.Pix[i], gt.Mask[i] = v*320, 1
			}
		}
		for k, e := range []*model.Estimator{fixed, live} {
			r, err := e.Estimate(ctx, left)
			if err != nil {
				panic(err)
			}
			m, _ := depth.DisparityErrors(r.Disparity, gt)
			se[k] += m.EPE
		}
		n++
		if f%5 == 0 {
			l, r := toPlanar(left, nw, nh), toPlanar(right, nw, nh)
			sl[0] += lossOf(w, l, r)
			sl[1] += lossOf(live.Weights(), l, r)
			nl++
		}
		ad.Offer(left, right)
		for owed += 0.2; owed >= 1; owed-- {
			if err := ad.Step(ctx); err != nil && !errors.Is(err, adapt.ErrTooFewFrames) && !errors.Is(err, adapt.ErrPaused) {
				panic(err)
			}
		}
		if n == 100 || f == d.Frames()-1 || f == 39 {
			s := ad.Status()
			fmt.Printf("%d-%d %.3f %.3f %.5f %.5f %d %d %.5f %.5f\n", f+1-n, f, se[0]/float64(n), se[1]/float64(n), sl[0]/float64(nl), sl[1]/float64(nl), s.Swaps, s.Refused, s.ServingLoss, s.CandidateLoss)
			os.Stdout.Sync()
			se, sl, n, nl = [2]float64{}, [2]float64{}, 0, 0
		}
	}
}
