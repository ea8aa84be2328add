// Package drive plays a synthetic drive (package synth) through
// Estimators while an Adapter (package model/adapt) learns from the same
// frames, and scores every frame's end-point error against the drive's
// exact ground truth: online adaptation measured over time.
//
// Disparity is in pixels at the frame's width, as in package depth; the
// truth counts the pixels with a positive disparity (every surface of a
// synthetic scene). Estimators of either kind are run the way they take
// frames: Estimate on the left view for one-image weights, EstimatePair
// for stereo weights.
package drive

import (
	"context"
	"errors"
	"fmt"
	"image"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/synth"
)

// Options configures Play. A nil *Options means the zero value, which is
// valid.
type Options struct {
	// Render sets the frames' size and sampling (synth.Options; Workers
	// is not used). Nil means synth's defaults.
	Render *synth.Options
	// StepsPerFrame, if positive, makes Play call Adapter.Step that many
	// times after each frame, in the frame loop (a fraction steps every
	// few frames): the same arguments then give the same figures. If 0,
	// Play runs Adapter.Run in the background for the whole drive, as on
	// a robot, and the figures depend on the machine's speed.
	StepsPerFrame float64
	// FPS paces the frames as a camera at that rate delivers them; a slow
	// frame is not caught up with a burst. 0 plays as fast as it runs.
	FPS float64
	// Duration, if positive, plays the drive over and over until that
	// much time has passed; 0 plays it once.
	Duration time.Duration
	// Block is the number of frames a Block averages (a block also ends
	// with its leg and with the drive). If 0 it is defaulted to 10.
	Block int
	// Frame, if not nil, is called before each frame is played with the
	// number of frames played so far (for logging memory over a long
	// run); an error stops Play with it.
	Frame func(played int) error
}

// Block is the mean end-point error of each Estimator over consecutive
// frames of one leg.
type Block struct {
	First, Last int         // drive frame indices, inclusive
	Style       synth.Style // the leg's style
	EPE         []float64   // mean EPE (px) per Estimator, in Play's order
	Elapsed     time.Duration
	Status      adapt.Status // the adapter's after the block's last frame
}

// Record is the end-point error of every frame played, per Estimator, and
// the frames (by play count) at which the adapter rolled back.
type Record struct {
	Frame     []float64   // play count of each frame, from 0
	EPE       [][]float64 // per Estimator, per frame
	Rollbacks []float64
}

// Play plays the drive d: it renders each frame, scores every Estimator
// of ests on it, offers it to ad (nil: no adapter) and steps ad as
// Options says, calling block after every block of frames. It returns
// the record of every frame. With StepsPerFrame 0 the adapter runs in the
// background until Play returns. It stops with ctx (returning what was
// played, and no error) and returns the first error of rendering,
// estimating, the adapter or block.
func Play(ctx context.Context, d *synth.Drive, ests []*model.Estimator, ad *adapt.Adapter, opt *Options, block func(Block) error) (rec *Record, err error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	if o.Block == 0 {
		o.Block = 10
	}
	if err := d.Check(); err != nil {
		return nil, fmt.Errorf("drive: %w", err)
	}
	switch {
	case len(ests) == 0:
		return nil, errors.New("drive: Play needs at least one Estimator")
	case o.Block < 0 || !(o.StepsPerFrame >= 0) || !(o.FPS >= 0) || o.Duration < 0:
		return nil, fmt.Errorf("drive: Block %d, StepsPerFrame %v, FPS %v and Duration %v must not be negative", o.Block, o.StepsPerFrame, o.FPS, o.Duration)
	}
	for _, e := range ests {
		if e == nil {
			return nil, errors.New("drive: an Estimator is nil")
		}
	}
	if o.StepsPerFrame == 0 && ad != nil {
		bg, cancel := context.WithCancel(ctx)
		done := make(chan error, 1)
		go func() { done <- ad.Run(bg) }()
		defer func() {
			cancel()
			if rerr := <-done; err == nil {
				err = rerr
			}
		}()
	}
	rec = &Record{EPE: make([][]float64, len(ests))}
	sum := make([]float64, len(ests))
	n, owed, lastRB := 0, 0.0, 0
	began := time.Now()
	pace := NewPacer(o.FPS)
	frames := d.Frames()
	for i := 0; ; i++ {
		f := i % frames
		if (o.Duration == 0 && i == frames) || (o.Duration > 0 && time.Since(began) >= o.Duration) || ctx.Err() != nil {
			return rec, nil
		}
		pace.Wait()
		if o.Frame != nil {
			if err := o.Frame(i); err != nil {
				return rec, err
			}
		}
		p, err := synth.GenerateFrame(d, f, o.Render)
		if err != nil {
			return rec, fmt.Errorf("drive: %w", err)
		}
		left, right := p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)
		gt, err := Truth(p)
		if err != nil {
			return rec, err
		}
		rec.Frame = append(rec.Frame, float64(i))
		for k, e := range ests {
			v, err := EPE(ctx, e, left, right, gt)
			if err != nil {
				return rec, err
			}
			rec.EPE[k] = append(rec.EPE[k], v)
			sum[k] += v
		}
		var s adapt.Status
		if ad != nil {
			if err := ad.Offer(left, right); err != nil {
				return rec, err
			}
			for owed += o.StepsPerFrame; owed >= 1; owed-- {
				if err := ad.Step(ctx); err != nil && !errors.Is(err, adapt.ErrTooFewFrames) && !errors.Is(err, adapt.ErrPaused) {
					return rec, err
				}
			}
			s = ad.Status()
			for ; lastRB < s.Rollbacks; lastRB++ {
				rec.Rollbacks = append(rec.Rollbacks, float64(i))
			}
		}
		n++
		leg, _, _ := d.Leg(f)
		nextLeg, _, _ := d.Leg((f + 1) % frames)
		if n == o.Block || f == frames-1 || nextLeg != leg {
			b := Block{First: f + 1 - n, Last: f, Style: d.Legs[leg].Style, EPE: make([]float64, len(ests)), Elapsed: time.Since(began), Status: s}
			for k := range sum {
				b.EPE[k], sum[k] = sum[k]/float64(n), 0
			}
			n = 0
			if block != nil {
				if err := block(b); err != nil {
					return rec, err
				}
			}
		}
	}
}

// Truth returns the left view's exact disparity of a synthetic pair in
// pixels, valid where it is positive.
func Truth(p *synth.Pair) (*depth.Disparity, error) {
	h, w := p.DispLeft.H, p.DispLeft.W
	gt, err := depth.NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		return nil, fmt.Errorf("drive: %w", err)
	}
	for i, v := range p.DispLeft.Pix[:h*w] {
		if v > 0 {
			gt.Pix[i], gt.Mask[i] = v*float32(w), 1
		}
	}
	return gt, nil
}

// EPE runs the Estimator on the pair (either kind) and returns its mean
// end-point error in pixels over the truth's valid pixels
// (depth.DisparityErrors).
func EPE(ctx context.Context, e *model.Estimator, left, right image.Image, gt *depth.Disparity) (float64, error) {
	est, err := Estimate(ctx, e, left, right)
	if err != nil {
		return 0, err
	}
	m, err := depth.DisparityErrors(est.Disparity, gt)
	if err != nil {
		return 0, fmt.Errorf("drive: %w", err)
	}
	return m.EPE, nil
}

// NewEstimator returns an Estimator of w (nil: the embedded default
// one-image weights) with the validity rules off (model.ValidityOff), as
// examples/adaptdrive plays the drive: the EPE of each Estimator then
// counts every pixel with truth, where with the rules it would count only
// the pixels that Estimator keeps, not the same for fixed and adapted
// weights.
func NewEstimator(w *model.Weights) (*model.Estimator, error) {
	return model.NewEstimator(w, &model.EstimatorOptions{Validity: model.ValidityOptions{MinConfidence: model.ValidityOff, MinTexture: model.ValidityOff}})
}

// Estimate runs the Estimator of either kind on the pair.
func Estimate(ctx context.Context, e *model.Estimator, left, right image.Image) (*model.Estimate, error) {
	if e.Kind() == model.KindStereo {
		return e.EstimatePair(ctx, left, right)
	}
	return e.Estimate(ctx, left)
}

// ScoreSet scores the Estimator on the pairs of a data set with left
// disparity truth (a drive written by synth.WriteDrive), counting the
// truth's positive pixels as Truth does, and calls block with the mean
// EPE of every block of consecutive pairs (by name). It returns the mean
// over all pairs. A pair without truth/disp_left is an error naming it.
func ScoreSet(ctx context.Context, e *model.Estimator, set *dataset.Set, blockLen int, block func(first, last string, mean float64) error) (float64, error) {
	if blockLen < 1 {
		return 0, fmt.Errorf("drive: block length %d must be positive", blockLen)
	}
	var sum, total float64
	first, n := "", 0
	for i := range set.Pairs {
		r, err := set.Read(i)
		if err != nil {
			return 0, fmt.Errorf("drive: %w", err)
		}
		if r.DispLeft == nil {
			return 0, fmt.Errorf("drive: %s has no truth/disp_left", r.Name)
		}
		gt, err := depth.NewDisparity(r.DispLeft.Rect)
		if err != nil {
			return 0, fmt.Errorf("drive: %w", err)
		}
		for k, v := range r.DispLeft.Pix {
			if v > 0 && r.DispLeft.Mask[k] != 0 {
				gt.Pix[k], gt.Mask[k] = v, 1
			}
		}
		v, err := EPE(ctx, e, r.Left, r.Right, gt)
		if err != nil {
			return 0, fmt.Errorf("drive: %s: %w", r.Name, err)
		}
		if n == 0 {
			first = r.Name
		}
		sum, total, n = sum+v, total+v, n+1
		if n == blockLen || i == len(set.Pairs)-1 {
			if block != nil {
				if err := block(first, r.Name, sum/float64(n)); err != nil {
					return 0, err
				}
			}
			sum, n = 0, 0
		}
	}
	return total / float64(max(len(set.Pairs), 1)), nil
}
