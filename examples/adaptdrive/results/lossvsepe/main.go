// Command lossvsepe plays a synthetic drive through fixed weights and
// weights adapted online in the frame loop (adaptdrive -steps-per-frame),
// and prints per block of frames the EPE against the drive's exact truth
// and the self-supervised objective of both (scored on every fifth frame):
// whether the objective the adapter's check reads tracks the depth error.
// Its defaults are the README's 2-minute drive (greenhouse:40,storage:1200
// at 320x240, a step every fifth frame, seed 1); output.txt is its output
// with them, built at commit 6fe63b4 and run on 2026-12-02 (with
// Options.MinGain's default; the figures do not depend on the machine's
// load, the steps being in the frame loop).
//
//	go run ./examples/adaptdrive/results/lossvsepe
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/model/adapt/drive"
	"github.com/parallaxdepth/parallax/synth"
)

const usage = "usage: lossvsepe [flags]\n\nPlays a synthetic drive with and without online adaptation and prints, per block of frames, the EPE and the self-supervised objective of both. Flags:\n\n"

func main() { command.Main(run, os.Interrupt) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) (err error) {
	fs := command.NewFlagSet("lossvsepe", usage, stderr)
	legs := fs.String("legs", "greenhouse:40,storage:1200", "the drive: STYLE:FRAMES legs in driving order, separated by commas")
	seed := fs.Uint64("seed", 1, "random seed of the drive and of the adapter")
	render := &synth.Options{}
	fs.IntVar(&render.Width, "width", 320, "image width in pixels")
	fs.IntVar(&render.Height, "height", 240, "image height in pixels")
	fs.IntVar(&render.Samples, "samples", 1, "anti-aliasing samples per pixel along each axis near edges")
	weights := fs.String("weights", "", "weights file (safetensors); empty means the embedded default one-image weights")
	play := &drive.Options{Render: render}
	fs.IntVar(&play.Block, "block", 100, "frames per printed row")
	fs.Float64Var(&play.StepsPerFrame, "steps-per-frame", 0.2, "adaptation steps after each frame, may be a fraction")
	every := fs.Int("loss-every", 5, "score the objective on every this many-th frame")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	if fs.NArg() != 0 {
		return fmt.Errorf("lossvsepe: unexpected arguments %q", fs.Args())
	}
	// Steps in the frame loop, not in the background, so that the weights
	// scored are those the frame was estimated with.
	if play.Block < 1 || !(play.StepsPerFrame > 0) || *every < 1 {
		return errors.New("lossvsepe: -block, -steps-per-frame and -loss-every must be positive")
	}
	ls, err := synth.ParseLegs(*legs)
	if err != nil {
		return fmt.Errorf("lossvsepe: -legs: %w", err)
	}
	d := &synth.Drive{Legs: ls, Seed: *seed}
	w, err := model.LoadOrDefault(*weights)
	if err != nil {
		return err
	}
	fixed, err := drive.NewEstimator(w)
	if err != nil {
		return err
	}
	live, err := drive.NewEstimator(w)
	if err != nil {
		return err
	}
	ad, err := adapt.New(live, &adapt.Options{Seed: *seed})
	if err != nil {
		return err
	}
	defer func() { err = errors.Join(err, ad.Close()) }()
	obj, err := newObjective(live, render.Width, render.Height)
	if err != nil {
		return err
	}
	defer func() { err = errors.Join(err, obj.Close()) }()

	var sum [2]float64 // the objective of the fixed and the adapted weights over the block
	scored := 0
	// Play hands out no frame, so the frame it is about to play is
	// rendered again here (GenerateFrame is a function of the drive, the
	// index and the options). The adapter has not yet seen the frame.
	play.Frame = func(i int) error {
		if i%*every != 0 {
			return nil
		}
		p, err := synth.GenerateFrame(d, i%d.Frames(), render)
		if err != nil {
			return fmt.Errorf("lossvsepe: %w", err)
		}
		if err := obj.SetPair(p); err != nil {
			return err
		}
		for k, e := range []*model.Estimator{fixed, live} {
			v, err := obj.Score(e.Weights())
			if err != nil {
				return err
			}
			sum[k] += v
		}
		scored++
		return nil
	}
	if _, err := fmt.Fprintln(stdout, "frames style epe_fixed epe_adapted loss_fixed loss_adapted swaps refused fallbacks serving_loss cand_loss start_loss"); err != nil {
		return err
	}
	_, err = drive.Play(ctx, d, []*model.Estimator{fixed, live}, ad, play, func(b drive.Block) error {
		s, n := b.Status, float64(scored) // a block without a scored frame prints NaN
		_, err := fmt.Fprintf(stdout, "%d-%d %s %.3f %.3f %.5f %.5f %d %d %d %.5f %.5f %.5f\n", b.First, b.Last, b.Style, b.EPE[0], b.EPE[1],
			sum[0]/n, sum[1]/n, s.Swaps, s.Refused, s.Fallbacks, s.ServingLoss, s.CandidateLoss, s.StartLoss)
		sum, scored = [2]float64{}, 0
		return err
	})
	return err
}
