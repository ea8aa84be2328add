package train

import (
	"cmp"
	"context"
	"fmt"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
)

// AdaptOptions configure Adapt. A nil *AdaptOptions means the defaults.
type AdaptOptions struct {
	// Steps is the number of training steps. Default 100.
	Steps int
	// Batch is the number of pairs per step, at most the set's pairs.
	// Default 4.
	Batch int
	// Seed seeds the batch order. Default 0.
	Seed uint64
	// Flip mirrors half of the samples (and swaps their views, see
	// data.FlipSwap), for weights that are then used with flip
	// post-processing, so that mirrored inputs stay inside what the
	// network is fitted to. Default false.
	Flip bool
	// MaxSide is the cap on the longer side of the network's input that
	// the adapted weights will run with (model.EstimatorOptions.MaxSide;
	// 0 means model.DefaultMaxSide). When every pair of the set has the
	// same size, Adapt trains at the size model.NetworkSize gives for it,
	// the size an Estimator runs those images at, instead of the weights'
	// training size (whose aspect ratio may differ: a 370×250 pair was
	// trained squashed to 256×128 and scored at 384×256). Pairs of
	// different sizes train at the weights' size.
	MaxSide int
	// LearningRate is Adam's rate after a warm-up of 2 % of the steps
	// (Schedule's default), constant to the end. If it is 0 it is
	// defaulted to DefaultRate, the training rate.
	LearningRate float64
	// Objective weighs the loss terms; nil means
	// loss.DefaultObjectiveOptions, the training objective.
	Objective *loss.ObjectiveOptions
	// Progress, if not nil, is called after every step.
	Progress func(Progress)
}

// Adapt fine-tunes a copy of w on the pairs of set with the
// self-supervised objective (left and right images only; ground truth is
// never read) and returns the adapted weights and the run's result. When
// ctx ends the weights reached so far come back with RunResult.Interrupted
// set.
func Adapt(ctx context.Context, w *model.Weights, set *dataset.Set, opt *AdaptOptions) (*model.Weights, *RunResult, error) {
	var o AdaptOptions
	if opt != nil {
		o = *opt
	}
	o.Steps = cmp.Or(o.Steps, 100)
	o.Batch = cmp.Or(o.Batch, 4)
	if o.Steps < 0 || o.Batch < 0 {
		return nil, nil, fmt.Errorf("train: Adapt: %d steps of batch %d: want positive numbers", o.Steps, o.Batch)
	}
	if w == nil {
		return nil, nil, fmt.Errorf("train: Adapt: the weights are nil")
	}
	if set == nil || len(set.Pairs) == 0 {
		return nil, nil, fmt.Errorf("train: Adapt: the data set has no pairs")
	}
	batch := min(o.Batch, len(set.Pairs))
	var aug *data.Augment
	if o.Flip {
		aug = &data.Augment{Flip: 0.5}
	}
	run, err := adaptSize(w, set, o.MaxSide)
	if err != nil {
		return nil, nil, err
	}
	src, err := NewDatasetSource(set, run.Config, batch, o.Seed, aug)
	if err != nil {
		return nil, nil, err
	}
	tr, err := NewTrainer(run, src, &TrainerOptions{Steps: o.Steps, Batch: batch, Seed: o.Seed, Progress: o.Progress,
		Schedule: Schedule{Rate: o.LearningRate}, Objective: o.Objective})
	if err != nil {
		return nil, nil, err
	}
	defer tr.Close()
	res, err := tr.Run(ctx)
	if err != nil {
		return nil, nil, err
	}
	// The network is fully convolutional: the adapted parameters keep the
	// weights' own size in their config.
	out := tr.Weights()
	out.Config.Width, out.Config.Height = w.Config.Width, w.Config.Height
	return out, res, nil
}

// adaptSize returns w, or a shallow copy of it whose config has the size an
// Estimator runs the set's pairs at (model.NetworkSize with maxSide) when
// all pairs have one size.
func adaptSize(w *model.Weights, set *dataset.Set, maxSide int) (*model.Weights, error) {
	pw, ph := set.Pairs[0].Width, set.Pairs[0].Height
	for _, p := range set.Pairs[1:] {
		if p.Width != pw || p.Height != ph {
			return w, nil
		}
	}
	nw, nh, err := model.NetworkSize(pw, ph, maxSide)
	if err != nil {
		return nil, fmt.Errorf("train: Adapt: %w", err)
	}
	c := w.Config
	c.Width, c.Height = nw, nh
	return &model.Weights{Config: c, Params: w.Params, Provenance: w.Provenance}, nil
}
