package train

import (
	"cmp"
	"math"
	"time"

	"github.com/parallaxdepth/parallax/loss"
)

// Progress is what a Trainer reports after every step, through
// TrainerOptions.Progress.
type Progress struct {
	// Step is the number of steps done, including this one and skipped
	// ones; Steps is the run's total.
	Step, Steps int
	// Epoch and Batch locate the batch of this step in the data order.
	Epoch, Batch int
	// Terms are the weighted loss terms of this step's batch, before the
	// update (see loss.Terms). For a skipped step they may be NaN or zero.
	Terms loss.Terms
	// Rate is the learning rate used by this step.
	Rate float64
	// StepsPerSec and PairsPerSec are the throughput since the run started
	// (or resumed), counting skipped steps.
	StepsPerSec, PairsPerSec float64
	// Elapsed is the time since the run started or resumed.
	Elapsed time.Duration

	// Skipped is set when the step changed nothing because its batch, its
	// loss or a gradient held NaN or Inf; SkipReason says why.
	Skipped    bool
	SkipReason string
	// Skips counts the skipped steps of the run so far (resumed runs
	// include the checkpoint's count).
	Skips int

	// Spread is the coefficient of variation (spatial standard deviation
	// over mean) of the finest left disparity d_L, averaged over the
	// batch; 0 for a skipped step.
	Spread float64
	// MeanDisparity is the mean of the finest d_L over the batch, in
	// pixels at the network's input width; 0 for a skipped step.
	MeanDisparity float64
	// Collapsed is set on the step at which Spread has stayed below
	// CollapseOptions.Spread, or MeanDisparity below
	// CollapseOptions.MinPixels, for CollapseOptions.Steps consecutive
	// steps (once per such episode): the network predicts a near-constant
	// or vanishing disparity map, the failure modes of too large a
	// learning rate and of saturated heads.
	Collapsed bool

	// Validated is set on the steps at which the held-out pairs
	// (TrainerOptions.Validation) were scored, after this step's update;
	// Validation is their mean weighted loss terms then.
	Validated  bool
	Validation loss.Terms

	// Checkpoint is the path of the checkpoint written after this step, or
	// "".
	Checkpoint string
}

// CollapseOptions sets the detection of a collapsed disparity map. The
// zero value means the defaults.
type CollapseOptions struct {
	// Spread is the threshold of the coefficient of variation of d_L
	// (spatial std / mean). If it is 0 it is defaulted to 0.02: real scenes
	// and the synthetic ones vary by far more than 2% across the image (our
	// own choice).
	Spread float64
	// MinPixels is the threshold of the mean disparity in pixels at the
	// network's width: below it the map has vanished (every point beyond
	// f·B/MinPixels; the sigmoid heads saturate at 0 and stop learning).
	// The coefficient of variation does not see this case, since it is
	// scale-free. If it is 0 it is defaulted to 0.25 px (our own choice).
	MinPixels float64
	// Steps is the number of consecutive steps below a threshold that
	// count as a collapse. If it is 0 it is defaulted to 10.
	Steps int
	// After is the number of steps from the start of the training during
	// which nothing is reported: a fresh start (PrepareHeads) is uniform by
	// design. If it is 0 it is defaulted to 200 (our own choice: on 32
	// generated greenhouse pairs at batch 4 the spread of a prepared fresh
	// start passed 0.02 after about 80 steps and 0.1 after about 90);
	// CollapseFromStart (or any negative value) means none.
	After int
}

// CollapseFromStart, as CollapseOptions.After, reports a collapse from the
// first step (a zero After means the default grace period).
const CollapseFromStart = -1

func (c CollapseOptions) withDefaults() CollapseOptions {
	c.Spread = cmp.Or(c.Spread, 0.02)
	c.MinPixels = cmp.Or(c.MinPixels, 0.25)
	c.Steps = cmp.Or(c.Steps, 10)
	switch {
	case c.After == 0:
		c.After = 200
	case c.After < 0:
		c.After = 0
	}
	return c
}

// mean returns the mean of d.
func mean(d []float32) float64 {
	var sum float64
	for _, v := range d {
		sum += float64(v)
	}
	return sum / float64(max(len(d), 1))
}

// spread returns the coefficient of variation of each of the n planes of
// d (n·plane values), averaged over the planes. A plane whose mean is not
// positive counts as 0 (constant).
func spread(d []float32, n int) float64 {
	if n == 0 || len(d) == 0 {
		return 0
	}
	plane := len(d) / n
	var total float64
	for i := range n {
		var sum, sq float64
		for _, v := range d[i*plane : (i+1)*plane] {
			sum += float64(v)
			sq += float64(v) * float64(v)
		}
		mean := sum / float64(plane)
		if mean > 0 {
			total += math.Sqrt(max(sq/float64(plane)-mean*mean, 0)) / mean
		}
	}
	return total / float64(n)
}

// rate measures throughput since a start time.
type rate struct {
	start time.Time
	steps int
}

func (r *rate) report(p *Progress, batch int) {
	r.steps++
	p.Elapsed = time.Since(r.start)
	if s := p.Elapsed.Seconds(); s > 0 {
		p.StepsPerSec = float64(r.steps) / s
		p.PairsPerSec = p.StepsPerSec * float64(batch)
	}
}
