package train

import (
	"context"
	"fmt"

	"github.com/parallaxdepth/parallax/dataset"
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
	// Progress, if not nil, is called after every step.
	Progress func(Progress)
}

// Adapt fine-tunes a copy of w on the pairs of set with the
// self-supervised objective (left and right images only; ground truth is
// never read) and returns the adapted weights and the run's result. When
// ctx ends the weights reached so far come back with RunResult.Interrupted
// set.
func Adapt(ctx context.Context, w *model.Weights, set *dataset.Set, opt *AdaptOptions) (*model.Weights, *RunResult, error) {
	o := AdaptOptions{Steps: 100, Batch: 4}
	if opt != nil {
		o = *opt
		if o.Steps == 0 {
			o.Steps = 100
		}
		if o.Batch == 0 {
			o.Batch = 4
		}
	}
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
	src, err := NewDatasetSource(set, w.Config, batch, o.Seed, aug)
	if err != nil {
		return nil, nil, err
	}
	tr, err := NewTrainer(w, src, &TrainerOptions{Steps: o.Steps, Batch: batch, Seed: o.Seed, Progress: o.Progress})
	if err != nil {
		return nil, nil, err
	}
	defer tr.Close()
	res, err := tr.Run(ctx)
	if err != nil {
		return nil, nil, err
	}
	return tr.Weights(), res, nil
}
