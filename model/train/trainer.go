package train

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
)

// Source serves the training batches of a Trainer: epochs of equally
// sized batches whose content is a function of the epoch and the position
// in it alone, so that a resumed run sees the same batches as an
// uninterrupted one. LoaderSource adapts a data.Loader.
type Source interface {
	// BatchesPerEpoch is the number of batches of every epoch.
	BatchesPerEpoch() int
	// Epoch starts serving epoch number epoch (from 0).
	Epoch(ctx context.Context, epoch int) Batches
}

// Batches walks the batches of one epoch, as data.Iter does: Next returns
// io.EOF after the last one; Close releases the iterator.
type Batches interface {
	Next() (*data.Batch, error)
	Close()
}

type loaderSource struct{ l *data.Loader }

func (s loaderSource) BatchesPerEpoch() int { return s.l.NumBatches() }
func (s loaderSource) Epoch(ctx context.Context, epoch int) Batches {
	return s.l.Epoch(ctx, epoch)
}

// LoaderSource returns a Source over a loader. The loader must have been
// made with data.Options.DropPartial (every batch of a Trainer has the same
// size), and its seed should be the Trainer's TrainerOptions.Seed, which
// checkpoints record.
func LoaderSource(l *data.Loader) Source { return loaderSource{l} }

// CacheBytes is the largest set, resized to the network's input (4 bytes a
// value, two views and the truth maps), that NewDatasetSource keeps in
// memory: adaptation on a few pairs and validation sets then decode and
// resize their images once instead of every step (a tenth of an
// adaptation step's CPU time on one 320×277 pair), while a training set of
// thousands of pairs is read from disk as before.
const CacheBytes = 64 << 20

// NewDatasetSource returns a Source over ds for the network configuration
// c: images resized to c's input size, batches of batch pairs (a last
// partial batch of an epoch is dropped), shuffled every epoch by seed, with
// augmentation aug (nil for none; data.DefaultAugment is the project's choice).
// It refuses a set with a pair smaller than model.MinSide on a side (the
// smallest input the network takes), with an error naming the pair, its
// size and the minimum. A set whose resized pairs fit in CacheBytes is
// kept in memory once read (data.Options.Cache).
func NewDatasetSource(ds *dataset.Set, c model.Config, batch int, seed uint64, aug *data.Augment) (Source, error) {
	c = c.WithDefaults()
	var cache bool
	if ds != nil {
		cache = int64(len(ds.Pairs))*int64(c.Width*c.Height)*int64(6+len(ds.Truth))*4 <= CacheBytes
	}
	l, err := data.NewLoader(ds, &data.Options{Width: c.Width, Height: c.Height, BatchSize: batch,
		Shuffle: true, Seed: seed, Augment: aug, DropPartial: true, MinSide: model.MinSide, Cache: cache})
	if err != nil {
		return nil, fmt.Errorf("train: %w", err)
	}
	return LoaderSource(l), nil
}

// TrainerOptions configures a Trainer. A nil *TrainerOptions means the defaults; each
// zero field means its default.
type TrainerOptions struct {
	// Steps is the number of training steps of the run (skipped ones
	// included). If it is 0 it is defaulted to 1000.
	Steps int
	// Batch is the number of pairs per step; every batch of the Source must
	// have this size. If it is 0 it is defaulted to 4.
	Batch int
	// Schedule sets the learning rate (see Schedule for its defaults).
	Schedule Schedule
	// Adam sets β1, β2 and ε (its LearningRate is ignored: the Schedule
	// sets the rate at every step). Nil means the Adam defaults.
	Adam *AdamConfig
	// Objective weighs the loss terms; nil means
	// loss.DefaultObjectiveOptions.
	Objective *loss.ObjectiveOptions
	// Seed is the seed of the Source's order and augmentation. The Trainer
	// draws no random numbers itself; it records the seed in checkpoints
	// and Resume refuses a checkpoint of another seed.
	Seed uint64
	// CheckpointPath, if not empty, is the file that checkpoints are
	// written to (atomically, replacing the previous one): every
	// CheckpointEvery steps, at the end of the run and when the run is
	// cancelled.
	CheckpointPath string
	// CheckpointEvery is the checkpoint interval in steps; 0 means only at
	// the end and on cancellation.
	CheckpointEvery int
	// Collapse sets the detection of a near-constant disparity map.
	Collapse CollapseOptions
	// Progress, if not nil, is called after every step.
	Progress func(Progress)
	// Validation, if not nil, holds pairs that are not trained on: every
	// ValidationEvery steps and after the last step the Trainer scores
	// the weights on them with the objective, without an update (no
	// augmentation, the same batches in the same order every time, at
	// most ValidationBatches of them), and reports the mean terms in
	// Progress.Validation. A set with fewer pairs than Batch is not
	// scored.
	Validation *dataset.Set
	// ValidationEvery is the interval in steps; 0 means CheckpointEvery,
	// or 100 if that is 0.
	ValidationEvery int
	// ValidationBatches caps the batches scored each time; 0 means 4
	// (at batch 4, 16 pairs: about 4 % of a run's time at the default
	// interval of 100 steps, as a forward pass of the training graph also
	// runs its backward pass).
	ValidationBatches int
}

// RunResult summarises a run of Trainer.Run.
type RunResult struct {
	// Step is the number of steps done (skipped ones included), counted
	// from the start of the training, not of this call.
	Step int
	// Skips is the number of skipped steps.
	Skips int
	// First and Last are the loss terms of the first and of the latest step
	// that was not skipped.
	First, Last loss.Terms
	// Interrupted reports that the context was cancelled before the run
	// finished; a checkpoint was written if TrainerOptions.CheckpointPath is set.
	Interrupted bool
	// Collapses counts the collapse episodes reported in this call.
	Collapses int
	// Checkpoint is the path of the last checkpoint written, or "".
	Checkpoint string
}

// Trainer fits a network to stereo pairs with the self-supervised
// objective of package loss: Adam with a warm-up and a step schedule,
// steps with NaN or Inf skipped, checkpoints that resume a run exactly,
// and collapse detection. A Trainer is not safe for concurrent use.
type Trainer struct {
	opt   TrainerOptions
	sched Schedule
	src   Source
	sess  *Session
	val   Source // held-out batches, or nil

	step, skips int
	first, last loss.Terms
	haveFirst   bool
	low         int // consecutive steps below the collapse threshold
}

// NewTrainer returns a Trainer that starts from the weights w (copied; use
// model.NewWeights for a fresh initialisation) and draws batches from src.
// It returns an error for nil arguments, invalid options or weights that
// do not fit their architecture.
func NewTrainer(w *model.Weights, src Source, opt *TrainerOptions) (*Trainer, error) {
	if src == nil {
		return nil, errors.New("train: trainer: no data source")
	}
	var o TrainerOptions
	if opt != nil {
		o = *opt
	}
	o.Steps = cmp.Or(o.Steps, 1000)
	o.Batch = cmp.Or(o.Batch, 4)
	if o.Steps < 0 || o.Batch < 0 || o.CheckpointEvery < 0 {
		return nil, fmt.Errorf("train: trainer: steps %d, batch %d and checkpoint interval %d must not be negative", o.Steps, o.Batch, o.CheckpointEvery)
	}
	if src.BatchesPerEpoch() < 1 {
		return nil, errors.New("train: trainer: the data source has no full batch")
	}
	o.Collapse = o.Collapse.withDefaults()
	if !(o.Collapse.Spread > 0) || !(o.Collapse.MinPixels > 0) || o.Collapse.Steps < 1 {
		return nil, fmt.Errorf("train: trainer: collapse thresholds %v, %v px and steps %d must be positive", o.Collapse.Spread, o.Collapse.MinPixels, o.Collapse.Steps)
	}
	sched, err := o.Schedule.withDefaults(o.Steps)
	if err != nil {
		return nil, err
	}
	var adam AdamConfig
	if o.Adam != nil {
		adam = *o.Adam
	}
	adam.LearningRate = sched.at(0, o.Steps)
	o.ValidationEvery = cmp.Or(o.ValidationEvery, map[bool]int{true: o.CheckpointEvery, false: 100}[o.CheckpointEvery > 0])
	o.ValidationBatches = cmp.Or(o.ValidationBatches, 4)
	if o.ValidationEvery < 0 || o.ValidationBatches < 0 {
		return nil, fmt.Errorf("train: trainer: validation interval %d and batches %d must not be negative", o.ValidationEvery, o.ValidationBatches)
	}
	var val Source
	if o.Validation != nil && len(o.Validation.Pairs) >= o.Batch {
		if val, err = NewDatasetSource(o.Validation, w.Config, o.Batch, o.Seed, nil); err != nil {
			return nil, fmt.Errorf("train: trainer: validation: %w", err)
		}
		if val.BatchesPerEpoch() < 1 {
			val = nil
		}
	}
	sess, err := NewSession(w, o.Batch, o.Objective, &adam)
	if err != nil {
		return nil, err
	}
	return &Trainer{opt: o, sched: sched, src: src, sess: sess, val: val}, nil
}

// Head initialisation of PrepareHeads.
const (
	headWeightScale = 0.1
	headBias        = -3
)

// PrepareHeads readies freshly initialised weights (model.NewWeights) for
// training from scratch: it multiplies the weights of the disparity heads
// (the layers named headS, and the stereo network's residual heads resS)
// by 0.1 and sets the headS biases to −3, so that
// every head starts near σ(−3)·d_max ≈ 0.047·d_max everywhere: small,
// nearly uniform disparities whose sigmoid still passes gradients (σ′(−3)
// ≈ 0.045). Our own choice, after a probe on 32 generated greenhouse
// pairs at 256×128: with the He-initialised heads the network went to zero
// disparity within about 20 steps, at learning rates 3e-4 and 1e-4 alike
// (the sigmoids saturated and learning stopped), while with these heads it
// kept a mean disparity of about 3.6 px and its error fell. It returns the
// number of head tensors changed.
func PrepareHeads(w *model.Weights) int {
	n := 0
	for name, v := range w.Params {
		if strings.HasPrefix(name, "res") && strings.HasSuffix(name, ".weight") {
			// A stereo network's residual heads start near 0 (biases are 0).
			for i := range v {
				v[i] *= headWeightScale
			}
			n++
			continue
		}
		if !strings.HasPrefix(name, "head") {
			continue
		}
		switch {
		case strings.HasSuffix(name, ".weight"):
			for i := range v {
				v[i] *= headWeightScale
			}
		case strings.HasSuffix(name, ".bias"):
			for i := range v {
				v[i] = headBias
			}
		default:
			continue
		}
		n++
	}
	return n
}

// Close releases the training graph.
func (t *Trainer) Close() error { return t.sess.Close() }

// Session returns the underlying training session.
func (t *Trainer) Session() *Session { return t.sess }

// Weights returns a copy of the current weights, with provenance entries
// for the steps done.
func (t *Trainer) Weights() *model.Weights {
	w := t.sess.Weights()
	w.Provenance["train.steps"] = fmt.Sprint(t.step)
	w.Provenance["train.skipped"] = fmt.Sprint(t.skips)
	w.Provenance["train.batch"] = fmt.Sprint(t.opt.Batch)
	w.Provenance["train.seed"] = fmt.Sprint(t.opt.Seed)
	return w
}

// Step returns the number of steps done, skipped ones included.
func (t *Trainer) Step() int { return t.step }

// Checkpoint returns the state of the run (copies), as SaveCheckpoint
// stores it.
func (t *Trainer) Checkpoint() *Checkpoint {
	return &Checkpoint{
		Weights: t.Weights(), Solver: t.sess.Solver.State(),
		Step: t.step, Steps: t.opt.Steps, Skips: t.skips, Seed: t.opt.Seed,
		Batch: t.opt.Batch, BatchesPerEpoch: t.src.BatchesPerEpoch(), Schedule: t.sched,
		FirstTerms: t.first,
	}
}

// Resume continues the run saved in c: it sets the weights, the solver's
// state and the position in the data order. It returns an error if c's
// architecture, batch size, seed or epoch length differ from the
// Trainer's, or if c is past the Trainer's number of steps. The schedule
// of the Trainer's options is used, so resume with the options of the
// interrupted run to continue it exactly.
func (t *Trainer) Resume(c *Checkpoint) error {
	if c == nil || c.Weights == nil {
		return errors.New("train: resume: empty checkpoint")
	}
	switch {
	case c.Batch != t.opt.Batch:
		return fmt.Errorf("train: resume: the checkpoint has batch size %d, this run %d", c.Batch, t.opt.Batch)
	case c.Seed != t.opt.Seed:
		return fmt.Errorf("train: resume: the checkpoint has seed %d, this run %d", c.Seed, t.opt.Seed)
	case c.BatchesPerEpoch != t.src.BatchesPerEpoch():
		return fmt.Errorf("train: resume: the checkpoint has %d batches per epoch, this data %d (a different data set or split?)", c.BatchesPerEpoch, t.src.BatchesPerEpoch())
	case c.Step > t.opt.Steps:
		return fmt.Errorf("train: resume: the checkpoint is at step %d, past this run's %d steps", c.Step, t.opt.Steps)
	}
	if err := t.sess.net.SetWeights(c.Weights); err != nil {
		return fmt.Errorf("train: resume: %w", err)
	}
	if err := t.sess.Solver.SetState(c.Solver); err != nil {
		return fmt.Errorf("train: resume: %w", err)
	}
	t.step, t.skips = c.Step, c.Skips
	t.first = c.FirstTerms
	t.haveFirst = c.Step > c.Skips
	t.low = 0
	return nil
}

// Run trains until TrainerOptions.Steps steps are done or ctx is cancelled. Each
// step sets the scheduled learning rate, runs the graph on one batch and
// applies Adam. A step whose batch, loss or gradient holds NaN or Inf is
// skipped: no weight and no solver moment changes, the data position
// advances, and Progress reports it. On cancellation Run writes a
// checkpoint (if TrainerOptions.CheckpointPath is set) and returns the result with
// Interrupted set and a nil error. Errors of the data source (a corrupt
// file, say) or of the graph end the run and are returned; after a data
// source error past step 0 Run first writes a checkpoint of the completed
// steps (if TrainerOptions.CheckpointPath is set) and names it in the error.
func (t *Trainer) Run(ctx context.Context) (*RunResult, error) {
	res := &RunResult{}
	defer func() {
		res.Step, res.Skips, res.First, res.Last = t.step, t.skips, t.first, t.last
	}()
	nb := t.src.BatchesPerEpoch()
	clock := rate{start: time.Now()}
	var it Batches
	defer func() {
		if it != nil {
			it.Close()
		}
	}()
	epoch := -1
	for t.step < t.opt.Steps {
		if ctx.Err() != nil {
			res.Interrupted = true
			break
		}
		e, pos := t.step/nb, t.step%nb
		if e != epoch {
			if it != nil {
				it.Close()
			}
			epoch = e
			it = t.src.Epoch(ctx, e)
			for range pos { // resume inside an epoch
				if _, err := it.Next(); err != nil {
					if ctx.Err() != nil {
						res.Interrupted = true
						break
					}
					return res, fmt.Errorf("train: epoch %d: skipping to batch %d: %w", e, pos, err)
				}
			}
			if res.Interrupted {
				break
			}
		}
		b, err := it.Next()
		if err != nil {
			if ctx.Err() != nil {
				res.Interrupted = true
				break
			}
			if err == io.EOF {
				err = fmt.Errorf("train: epoch %d ended after %d batches, the source promised %d", e, pos, nb)
			} else {
				err = fmt.Errorf("train: epoch %d, batch %d: %w", e, pos, err)
			}
			return res, t.saveOnDataError(res, err)
		}
		p, err := t.train(b, e, pos)
		if err != nil {
			return res, err
		}
		if p.Collapsed {
			res.Collapses++
		}
		if t.val != nil && (t.step%t.opt.ValidationEvery == 0 || t.step == t.opt.Steps) {
			terms, err := t.validate(ctx)
			if err != nil && ctx.Err() == nil {
				return res, err
			}
			p.Validation, p.Validated = terms, err == nil
		}
		if t.opt.CheckpointPath != "" && t.opt.CheckpointEvery > 0 && t.step%t.opt.CheckpointEvery == 0 && t.step < t.opt.Steps {
			if err := SaveCheckpoint(t.opt.CheckpointPath, t.Checkpoint()); err != nil {
				return res, err
			}
			p.Checkpoint, res.Checkpoint = t.opt.CheckpointPath, t.opt.CheckpointPath
		}
		clock.report(&p, t.opt.Batch)
		if t.opt.Progress != nil {
			t.opt.Progress(p)
		}
	}
	if t.opt.CheckpointPath != "" {
		if err := SaveCheckpoint(t.opt.CheckpointPath, t.Checkpoint()); err != nil {
			return res, err
		}
		res.Checkpoint = t.opt.CheckpointPath
	}
	return res, nil
}

// validate returns the mean weighted terms of the objective over the
// held-out batches (epoch 0 of t.val, at most ValidationBatches of them),
// leaving the weights and the solver as they are.
func (t *Trainer) validate(ctx context.Context) (loss.Terms, error) {
	it := t.val.Epoch(ctx, 0)
	defer it.Close()
	var sum loss.Terms
	n := min(t.val.BatchesPerEpoch(), t.opt.ValidationBatches)
	for k := range n {
		b, err := it.Next()
		if err != nil {
			return loss.Terms{}, fmt.Errorf("train: validation batch %d: %w", k, err)
		}
		terms, err := t.sess.Forward(b.Left, b.Right)
		t.sess.ClearGradients()
		if err != nil {
			return loss.Terms{}, fmt.Errorf("train: validation at step %d: %w", t.step, err)
		}
		sum.Appearance += terms.Appearance / float64(n)
		sum.Smoothness += terms.Smoothness / float64(n)
		sum.Consistency += terms.Consistency / float64(n)
		sum.Total += terms.Total / float64(n)
	}
	return sum, nil
}

// saveOnDataError writes a checkpoint of the steps done so far when the
// data source fails (a corrupt file, say), so that the user can fix the data
// and resume instead of losing the steps since the last checkpoint. The
// state is the one after the last completed step: no step has begun on the
// failed batch. It returns err, with the checkpoint named or its own
// failure added.
func (t *Trainer) saveOnDataError(res *RunResult, err error) error {
	if t.opt.CheckpointPath == "" || t.step == 0 {
		return err
	}
	if serr := SaveCheckpoint(t.opt.CheckpointPath, t.Checkpoint()); serr != nil {
		return fmt.Errorf("%w (and the checkpoint could not be written: %v)", err, serr)
	}
	res.Checkpoint = t.opt.CheckpointPath
	return fmt.Errorf("%w (checkpoint of step %d written to %s)", err, t.step, t.opt.CheckpointPath)
}

// train runs one step on b and advances the step count.
func (t *Trainer) train(b *data.Batch, epoch, pos int) (Progress, error) {
	p := Progress{Steps: t.opt.Steps, Epoch: epoch, Batch: pos}
	in := t.sess.net.Arch.Input
	if b == nil || b.Left == nil || b.Right == nil {
		return p, fmt.Errorf("train: epoch %d, batch %d: empty batch", epoch, pos)
	}
	for _, im := range []struct {
		what       string
		n, c, h, w int
	}{{"left", b.Left.N, b.Left.C, b.Left.H, b.Left.W}, {"right", b.Right.N, b.Right.C, b.Right.H, b.Right.W}} {
		if im.n != t.opt.Batch || im.c != in.C || im.h != in.H || im.w != in.W {
			return p, fmt.Errorf("train: epoch %d, batch %d: %s images are %dx%dx%dx%d, the run takes %dx%dx%dx%d (a partial batch? use DropPartial)",
				epoch, pos, im.what, im.n, im.c, im.h, im.w, t.opt.Batch, in.C, in.H, in.W)
		}
	}
	p.Rate = t.sched.at(t.step, t.opt.Steps)
	if err := t.sess.Solver.SetLearningRate(p.Rate); err != nil {
		return p, err
	}
	if name, i, v, bad := nonFinite(b); bad {
		p.Skipped = true
		p.SkipReason = fmt.Sprintf("the %s image of %s holds %v at index %d", name, pairName(b, i), v, i)
	} else {
		terms, err := t.sess.Forward(b.Left, b.Right)
		if err != nil {
			return p, fmt.Errorf("train: step %d: %w", t.step, err)
		}
		p.Terms = terms
		if !finiteTerms(terms) {
			t.sess.ClearGradients()
			p.Skipped = true
			p.SkipReason = fmt.Sprintf("the loss is not finite (appearance %v, smoothness %v, consistency %v)", terms.Appearance, terms.Smoothness, terms.Consistency)
		} else if err := t.sess.Solver.Step(t.sess.vgs); err != nil {
			if !errors.Is(err, ErrNonFiniteGradient) {
				return p, fmt.Errorf("train: step %d: %w", t.step, err)
			}
			p.Skipped = true
			p.SkipReason = err.Error()
		}
	}
	t.step++
	p.Step = t.step
	if p.Skipped {
		t.skips++
	} else {
		if !t.haveFirst {
			t.first, t.haveFirst = p.Terms, true
		}
		t.last = p.Terms
		dl, _ := t.sess.obj.Disparity(0)
		p.Spread = spread(dl, t.opt.Batch)
		p.MeanDisparity = mean(dl) * float64(t.sess.net.Arch.Input.W)
		if t.step > t.opt.Collapse.After && (p.Spread < t.opt.Collapse.Spread || p.MeanDisparity < t.opt.Collapse.MinPixels) {
			t.low++
			p.Collapsed = t.low == t.opt.Collapse.Steps
		} else {
			t.low = 0
		}
	}
	p.Skips = t.skips
	return p, nil
}

// nonFinite finds the first NaN or Inf of a batch's images; i is the flat
// index into that image batch.
func nonFinite(b *data.Batch) (name string, i int, v float32, bad bool) {
	for _, im := range []struct {
		name string
		pix  []float32
	}{{"left", b.Left.Pix}, {"right", b.Right.Pix}} {
		for i, v := range im.pix {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				return im.name, i, v, true
			}
		}
	}
	return "", 0, 0, false
}

func pairName(b *data.Batch, i int) string {
	per := b.Left.C * b.Left.H * b.Left.W
	if n := i / per; n < len(b.Names) {
		return fmt.Sprintf("pair %q", b.Names[n])
	}
	return "the batch"
}

func finiteTerms(t loss.Terms) bool {
	for _, v := range []float64{t.Appearance, t.Smoothness, t.Consistency, t.Total} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}
