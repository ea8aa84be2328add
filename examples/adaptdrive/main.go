// Command adaptdrive plays a synthetic drive (by default from a greenhouse
// into a storage room) through two Estimators with the same starting
// weights: one fixed, one adapted online by package model/adapt from the
// stream itself, and prints the mean end-point error of both over each
// block of frames against the drive's exact ground truth.
//
//	go run ./examples/adaptdrive -legs greenhouse:40,storage:120 -block 10
//
// With -steps-per-frame N the adapter takes N steps after each frame in the
// frame loop (reproducible: the same flags give the same figures); with
// the default 0 it runs in the background at -rate steps per second, as
// on a robot, and the figures depend on the machine's speed.
//
// -fps paces the frame loop like a camera; -duration plays the drive over
// and over until that much time has passed, and -rss-log appends the
// process's resident memory to a file once a minute (the long-run memory
// measurement of issue 14):
//
//	nice -n 10 go run ./examples/adaptdrive -duration 30m -fps 10 -rss-log rss.csv > drive.txt
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"image"
	"io"
	"os"
	"os/signal"
	"time"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/synth"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("adaptdrive", flag.ContinueOnError)
	fs.SetOutput(stderr)
	legs := fs.String("legs", "greenhouse:40,storage:120", "the drive: STYLE:FRAMES legs in driving order, separated by commas")
	seed := fs.Uint64("seed", 1, "random seed of the drive and of the adapter")
	width := fs.Int("width", 320, "image width in pixels")
	height := fs.Int("height", 240, "image height in pixels")
	samples := fs.Int("samples", 1, "anti-aliasing samples per pixel along each axis near edges")
	weights := fs.String("weights", "", "weights file (safetensors); empty means the embedded default one-image weights")
	block := fs.Int("block", 10, "frames per printed row")
	rate := fs.Float64("rate", 2, "adaptation steps per second in the background")
	perFrame := fs.Int("steps-per-frame", 0, "adaptation steps after each frame in the frame loop instead of the background (0: background)")
	lr := fs.Float64("lr", 0, "adaptation learning rate (0: the adapter's default)")
	fps := fs.Float64("fps", 0, "frames per second of the frame loop, as a camera delivers them (0: as fast as the loop runs)")
	duration := fs.Duration("duration", 0, "play the drive over and over until this much time has passed (0: once)")
	rssLog := fs.String("rss-log", "", "append the resident memory (MB) to this CSV file at the start, once a minute and at the end")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() != 0 {
		return fmt.Errorf("adaptdrive: unexpected arguments %q", fs.Args())
	}
	if *block < 1 || *perFrame < 0 || *fps < 0 || *duration < 0 {
		return errors.New("adaptdrive: -block must be positive and -steps-per-frame, -fps and -duration not negative")
	}
	ls, err := synth.ParseLegs(*legs)
	if err != nil {
		return fmt.Errorf("adaptdrive: -legs: %w", err)
	}
	d := &synth.Drive{Legs: ls, Seed: *seed}
	var w *model.Weights
	if *weights != "" {
		if w, err = model.Load(*weights); err != nil {
			return err
		}
	} else if w, err = model.Default(); err != nil {
		return err
	}
	opts := &model.EstimatorOptions{Validity: model.ValidityOptions{MinConfidence: model.ValidityOff, MinTexture: model.ValidityOff}}
	fixed, err := model.NewEstimator(w, opts)
	if err != nil {
		return err
	}
	live, err := model.NewEstimator(w, opts)
	if err != nil {
		return err
	}
	ad, err := adapt.New(live, &adapt.Options{StepsPerSecond: *rate, Seed: *seed, LearningRate: *lr})
	if err != nil {
		return err
	}
	defer ad.Close()
	bg, cancel := context.WithCancel(ctx)
	done := make(chan error, 1)
	if *perFrame == 0 {
		go func() { done <- ad.Run(bg) }()
	} else {
		close(done)
	}
	defer func() { cancel(); <-done }()

	timeCol := func(string) string { return "" } // the elapsed time, only for runs of a set -duration
	if *duration > 0 {
		timeCol = func(s string) string { return fmt.Sprintf("%8s ", s) }
	}
	fmt.Fprintf(stdout, "%s%-8s %-10s %12s %12s %6s %8s\n", timeCol("time_s"), "frames", "style", "EPE fixed", "EPE adapted", "swaps", "refused")
	var mem *rssLogger
	if *rssLog != "" {
		if mem, err = newRSSLogger(*rssLog, time.Minute); err != nil {
			return err
		}
		defer mem.Close()
	}
	status := func() (int, int, int) { s := ad.Status(); return s.Steps, s.Swaps, s.Rollbacks }
	var sumFixed, sumLive float64
	n := 0
	began := time.Now()
	var interval time.Duration
	if *fps > 0 {
		interval = time.Duration(float64(time.Second) / *fps)
	}
	next := began
	frames := d.Frames()
	for i := 0; ; i++ {
		f := i % frames
		if (*duration == 0 && i == frames) || (*duration > 0 && time.Since(began) >= *duration) || ctx.Err() != nil {
			break
		}
		if interval > 0 {
			if wait := time.Until(next); wait > 0 {
				time.Sleep(wait)
			}
			next = next.Add(interval)
			if now := time.Now(); next.Before(now) {
				next = now // a slow frame: no burst to catch up
			}
		}
		if mem != nil {
			if err := mem.Tick(i, status); err != nil {
				return err
			}
		}
		p, err := synth.GenerateFrame(d, f, &synth.Options{Width: *width, Height: *height, Samples: *samples})
		if err != nil {
			return err
		}
		left, right := p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)
		truth, err := truthOf(p)
		if err != nil {
			return err
		}
		ef, err := epe(ctx, fixed, left, right, truth)
		if err != nil {
			return err
		}
		el, err := epe(ctx, live, left, right, truth)
		if err != nil {
			return err
		}
		if err := ad.Offer(left, right); err != nil {
			return err
		}
		for range *perFrame {
			if err := ad.Step(ctx); err != nil && !errors.Is(err, adapt.ErrTooFewFrames) && !errors.Is(err, adapt.ErrPaused) {
				return err
			}
		}
		sumFixed, sumLive, n = sumFixed+ef, sumLive+el, n+1
		if n == *block || f == frames-1 {
			leg, _, _ := d.Leg(f)
			s := ad.Status()
			fmt.Fprintf(stdout, "%s%-8s %-10s %12.3f %12.3f %6d %8d\n", timeCol(fmt.Sprintf("%.0f", time.Since(began).Seconds())), fmt.Sprintf("%d-%d", f+1-n, f), ls[leg].Style, sumFixed/float64(n), sumLive/float64(n), s.Swaps, s.Refused)
			sumFixed, sumLive, n = 0, 0, 0
		}
	}
	if mem != nil {
		if err := mem.Final(status); err != nil {
			return err
		}
	}
	if s := ad.Status(); s.Paused {
		fmt.Fprintf(stdout, "adapter paused: %s\n", s.Reason)
	}
	return nil
}

// truthOf returns the left view's exact disparity in pixels.
func truthOf(p *synth.Pair) (*depth.Disparity, error) {
	h, w := p.DispLeft.H, p.DispLeft.W
	gt, err := depth.NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		return nil, err
	}
	for i, v := range p.DispLeft.Pix[:h*w] {
		if v > 0 {
			gt.Pix[i], gt.Mask[i] = v*float32(w), 1
		}
	}
	return gt, nil
}

// epe runs the Estimator of either kind on the pair and returns its
// end-point error in pixels.
func epe(ctx context.Context, e *model.Estimator, left, right *image.NRGBA, gt *depth.Disparity) (float64, error) {
	var est *model.Estimate
	var err error
	if e.Kind() == "stereo" {
		est, err = e.EstimatePair(ctx, left, right)
	} else {
		est, err = e.Estimate(ctx, left)
	}
	if err != nil {
		return 0, err
	}
	m, err := depth.DisparityErrors(est.Disparity, gt)
	if err != nil {
		return 0, fmt.Errorf("adaptdrive: %w", err)
	}
	return m.EPE, nil
}
