package adapt

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"time"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/planar"
)

// Options configures an Adapter. A nil *Options means the zero value,
// which is valid; a zero field means its documented default. MinGain's
// default comes from a measured drive (see its doc); the others were not
// tuned on one.
type Options struct {
	// StepsPerSecond caps the training steps per second of Run (the CPU
	// budget). If 0 it is defaulted to 2.
	StepsPerSecond float64
	// Workers bounds the goroutines the adapter's kernels use at once,
	// the stepping goroutine's included (with StepsPerSecond, the CPU
	// budget): the other cores stay free for inference. If 0 it is
	// defaulted to half of runtime.GOMAXPROCS(0) at New, at least 1 (one
	// core of the two of our test machine); the weights do not depend on
	// it.
	Workers int
	// Buffer is the replay buffer's capacity in pairs, held-out frames
	// included; the oldest pair leaves first. If 0 it is defaulted to 32.
	Buffer int
	// HoldOut is the number of newest admitted pairs held back to score
	// candidates. If 0 it is defaulted to 4; it must be below Buffer.
	HoldOut int
	// StepsPerCheck is the number of steps between two checks (and
	// possible swaps). If 0 it is defaulted to 10.
	StepsPerCheck int
	// Margin is how much worse, relatively, a candidate may score on the
	// held-out frames than the weights in service and still be swapped
	// in. Default 0: no worse.
	Margin float64
	// MinGain is how much better, relatively, adapted weights must score
	// on the held-out frames than the starting weights to be swapped in
	// and to stay in service: a candidate must score at most (1 − MinGain)
	// times the starting weights, and weights in service that no longer
	// do are replaced by the starting weights at the next refusal. The
	// self-supervised objective is a noisy stand-in for the depth error:
	// on the README's drive, in the last 100 frames the adapted weights
	// scored 0.07 % below the starting weights and were 3 % worse in EPE,
	// while in every block where they were better in EPE they scored 9 %
	// or more below. If 0 it is defaulted to 0.02; GainOff requires only
	// no loss (at most the starting weights' objective).
	MinGain float64
	// MaxDrift bounds the relative L2 distance of a candidate from the
	// starting weights. If 0 it is defaulted to 0.05; DriftOff turns the
	// bound off.
	MaxDrift float64
	// LearningRate is Adam's step size. If 0 it is defaulted to 1e-4, a
	// third of train.DefaultRate: the weights in service are already
	// trained.
	LearningRate float64
	// MinChange is the smallest mean absolute luma difference (RGB in
	// [0, 1], Rec. 601 luma, at the training size) between a pair's left
	// view and the last admitted one for the pair to count as new. If 0
	// it is defaulted to 0.003, a third of the smallest difference we saw
	// between consecutive frames of a synthetic greenhouse drive at 5 cm a
	// frame (0.0086 to 0.012 at 128×64, synth seed 3; TestGates). A
	// camera's noise alone may exceed it; raise it to the noise of a
	// standing robot. GateOff admits near-duplicates.
	MinChange float64
	// MinContrast is the smallest standard deviation of the left view's
	// luma for a pair to be admitted (a black, blown-out or covered
	// camera fails it). If 0 it is defaulted to 0.02; GateOff turns the
	// test off.
	MinContrast float64
	// KeepSwapped turns off the view-order test (see the package doc).
	// Default false: pairs whose views look swapped are refused.
	KeepSwapped bool
	// Seed seeds the choice of training pairs.
	Seed uint64
	// Objective sets the self-supervised objective; nil means
	// loss.DefaultObjectiveOptions.
	Objective *loss.ObjectiveOptions
}

// GateOff, as Options.MinChange or MinContrast, turns that gate off;
// DriftOff, as Options.MaxDrift, turns the drift bound off; GainOff, as
// Options.MinGain, requires no gain.
const (
	GateOff  = -1
	DriftOff = -1
	GainOff  = -1
)

func (o *Options) resolved() (Options, error) {
	var r Options
	if o != nil {
		r = *o
	}
	r.StepsPerSecond = cmp.Or(r.StepsPerSecond, 2)
	r.MaxDrift = cmp.Or(r.MaxDrift, 0.05)
	r.LearningRate = cmp.Or(r.LearningRate, 1e-4)
	r.MinChange = cmp.Or(r.MinChange, 0.003)
	r.MinContrast = cmp.Or(r.MinContrast, 0.02)
	r.MinGain = cmp.Or(r.MinGain, 0.02)
	r.Workers = cmp.Or(r.Workers, max(1, runtime.GOMAXPROCS(0)/2))
	if r.Workers < 0 {
		return r, fmt.Errorf("adapt: Workers %d must not be negative", r.Workers)
	}
	r.Buffer = cmp.Or(r.Buffer, 32)
	r.HoldOut = cmp.Or(r.HoldOut, 4)
	r.StepsPerCheck = cmp.Or(r.StepsPerCheck, 10)
	for _, f := range []struct {
		name string
		v    float64
	}{{"StepsPerSecond", r.StepsPerSecond}, {"LearningRate", r.LearningRate}} {
		if !(f.v > 0) || math.IsInf(f.v, 0) {
			return r, fmt.Errorf("adapt: %s %v must be positive and finite", f.name, f.v)
		}
	}
	if !(r.Margin >= 0) || math.IsInf(r.Margin, 0) {
		return r, fmt.Errorf("adapt: Margin %v must be finite and not negative", r.Margin)
	}
	if r.Buffer < 2 || r.Buffer > 4096 || r.HoldOut < 1 || r.HoldOut >= r.Buffer {
		return r, fmt.Errorf("adapt: Buffer %d and HoldOut %d must satisfy 1 <= HoldOut < Buffer <= 4096", r.Buffer, r.HoldOut)
	}
	if r.StepsPerCheck < 1 {
		return r, fmt.Errorf("adapt: StepsPerCheck %d must be positive", r.StepsPerCheck)
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"MaxDrift", r.MaxDrift}, {"MinChange", r.MinChange}, {"MinContrast", r.MinContrast}, {"MinGain", r.MinGain}} {
		if math.IsNaN(f.v) || math.IsInf(f.v, 0) || (f.v < 0 && f.v != -1) {
			return r, fmt.Errorf("adapt: %s %v must be positive and finite, or -1 (off)", f.name, f.v)
		}
	}
	if r.MinGain >= 1 {
		return r, fmt.Errorf("adapt: MinGain %v must be below 1", r.MinGain)
	}
	if r.Objective != nil {
		if err := r.Objective.Validate(); err != nil {
			return r, fmt.Errorf("adapt: %w", err)
		}
	}
	return r, nil
}

// Status is what an Adapter has done so far.
type Status struct {
	// Offered counts Offer calls; Replaced the offered pairs replaced by a
	// newer one before the adapter took them.
	Offered, Replaced int
	// Admitted, Duplicates, LowContrast and Swapped count the taken pairs
	// by the gate's verdict.
	Admitted, Duplicates, LowContrast, Swapped int
	// Steps, Checks, Swaps, Refused and Rollbacks count training steps,
	// checks, swaps into the Estimator, refused candidates and roll-backs
	// (every refusal is one, and so is every non-finite value). Fallbacks
	// counts the refusals at which the weights in service scored worse
	// than the starting weights, which were then put back in service.
	Steps, Checks, Swaps, Refused, Rollbacks, Fallbacks int
	// Paused is set by a non-finite value; Reason says why, or why the
	// last candidate was refused.
	Paused bool
	Reason string
	// ServingLoss, CandidateLoss and StartLoss are the last check's mean
	// objective on the held-out frames of the weights in service, the
	// candidate and the starting weights; Drift is the last candidate's
	// relative L2 distance from the starting weights.
	ServingLoss, CandidateLoss, StartLoss, Drift float64
}

// ErrPaused is returned by Step while the adapter is paused; ErrTooFewFrames
// while the buffer holds no pair beyond the held-out ones.
var (
	ErrPaused       = errors.New("adapt: paused (see Status.Reason; Resume continues)")
	ErrTooFewFrames = errors.New("adapt: too few admitted pairs to train on")
)

// Adapter adapts a running Estimator's weights to the pairs it is
// offered. Offer, Status, Snapshot and Resume are safe for concurrent
// use with each other and with Run or Step; Step and Run take turns.
type Adapter struct {
	est *model.Estimator
	opt Options

	mu        sync.Mutex // guards pending, frameSize, status and serving
	pending   [2]image.Image
	hasPend   bool
	frameSize image.Point // the size of the first offered pair; zero before
	status    Status
	serving   *model.Weights
	notify    chan struct{} // a pair is pending
	resumed   chan struct{} // Resume was called
	stepping  sync.Mutex    // one Step at a time; guards what follows

	start     *model.Weights
	startNorm float64
	// Set from the first pair taken (prepare): the network size the
	// Estimator runs the offered pairs at, which is the training size.
	w, h   int
	shift  int            // the view-order test's largest shift, pixels
	sess   *train.Session // trains the candidate; also scores other weights
	frames []*frame       // oldest first
	last   []float32      // luma of the last admitted left view; nil before
	tmp    *scratch
	rng    *rand.Rand
	since  int // steps since the last check
	// servingID numbers the weights in service, from 1; a frame's cached
	// loss in service is valid while its servingID equals it.
	servingID int
	adapted   bool // the weights in service are not the starting weights
}

// New returns an Adapter for est, starting from the weights it runs now.
// The training graph (batch 1) is built when the first offered pair is
// taken, at the size the Estimator runs pairs of that size at
// (Estimator.NetworkSize: its MaxSide, model.DefaultMaxSide by default,
// or the weights' own size with EstimatorOptions.TrainingSize), so that
// the weights are trained on what they will see. It returns an error for
// a nil Estimator or invalid options.
func New(est *model.Estimator, opt *Options) (*Adapter, error) {
	if est == nil {
		return nil, errors.New("adapt: estimator is nil")
	}
	o, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	w0 := copyWeights(est.Weights())
	a := &Adapter{est: est, opt: o, start: w0, serving: est.Weights(),
		notify: make(chan struct{}, 1), resumed: make(chan struct{}, 1),
		rng: rand.New(rand.NewPCG(o.Seed, 0x61646170)), servingID: 1}
	if a.startNorm = math.Sqrt(sqDist(w0, nil)); a.startNorm == 0 {
		a.startNorm = 1 // all-zero start: the drift is absolute
	}
	return a, nil
}

// prepare builds the training graph at the network size of fw × fh
// pairs. Called with a.stepping held, once.
func (a *Adapter) prepare(fw, fh int) error {
	nw, nh, err := a.est.NetworkSize(fw, fh)
	if err != nil {
		return fmt.Errorf("adapt: %w", err)
	}
	a.mu.Lock()
	serving := a.serving
	a.mu.Unlock()
	a.w, a.h = nw, nh
	if a.tmp, err = newScratch(nw, nh); err != nil {
		return err
	}
	a.shift = max(1, int(math.Ceil(a.start.Config.DMax*float64(nw))))
	if a.sess, err = train.NewSession(a.atTrainingSize(serving), 1, a.opt.Objective, &train.AdamConfig{LearningRate: a.opt.LearningRate}); err != nil {
		return err
	}
	return a.sess.SetWorkers(a.opt.Workers)
}

// atTrainingSize returns w (sharing its parameters) with the training
// graph's input size in its config. The network is fully convolutional:
// the parameters are the same at any size.
func (a *Adapter) atTrainingSize(w *model.Weights) *model.Weights {
	c := w.Config
	c.Width, c.Height = a.w, a.h
	return &model.Weights{Config: c, Params: w.Params, Provenance: w.Provenance}
}

// candidate returns a copy of the training graph's weights with the
// starting weights' config, which the Estimator requires.
func (a *Adapter) candidate() *model.Weights {
	w := a.sess.Weights()
	w.Config = a.start.Config
	return w
}

// Close releases the training graph. Call it after Run has returned.
func (a *Adapter) Close() error {
	if a.sess == nil {
		return nil
	}
	return a.sess.Close()
}

// Offer hands the adapter a rectified pair and returns at once: the pair
// waits until the adapting goroutine takes it, replacing a pair that
// still waits. The first pair offered sets the size of every pair (one
// camera; the training graph is built for it). The adapter reads the
// images later, so the caller must not change them after Offer. It
// returns an error for nil or empty images, views of different sizes,
// and a pair of another size than the first.
func (a *Adapter) Offer(left, right image.Image) error {
	if left == nil || right == nil {
		return errors.New("adapt: offered image is nil")
	}
	lb, rb := left.Bounds(), right.Bounds()
	if lb.Empty() || lb.Size() != rb.Size() {
		return fmt.Errorf("adapt: offered views are %dx%d and %dx%d: they must have the same, non-empty size", lb.Dx(), lb.Dy(), rb.Dx(), rb.Dy())
	}
	if err := planar.CheckSize(lb.Dx(), lb.Dy()); err != nil {
		return fmt.Errorf("adapt: offered image: %w", err)
	}
	a.mu.Lock()
	if a.frameSize == (image.Point{}) {
		a.frameSize = lb.Size()
	} else if lb.Size() != a.frameSize {
		fs := a.frameSize
		a.mu.Unlock()
		return fmt.Errorf("adapt: offered views are %dx%d, but this adapter trains on the %dx%d pairs it was offered first", lb.Dx(), lb.Dy(), fs.X, fs.Y)
	}
	a.status.Offered++
	if a.hasPend {
		a.status.Replaced++
	}
	a.pending, a.hasPend = [2]image.Image{left, right}, true
	a.mu.Unlock()
	select {
	case a.notify <- struct{}{}:
	default:
	}
	return nil
}

// Status returns a copy of the adapter's counters and last check.
func (a *Adapter) Status() Status {
	a.mu.Lock()
	defer a.mu.Unlock()
	return a.status
}

// Snapshot returns a copy of the weights in service (the Estimator's).
func (a *Adapter) Snapshot() *model.Weights {
	a.mu.Lock()
	w := a.serving
	a.mu.Unlock()
	return copyWeights(w)
}

// Resume clears a pause; training continues from the weights in service.
func (a *Adapter) Resume() {
	a.mu.Lock()
	a.status.Paused = false
	a.mu.Unlock()
	select {
	case a.resumed <- struct{}{}:
	default:
	}
}

// Run adapts until ctx ends, then returns nil: it takes offered pairs as
// they come and runs Step at most Options.StepsPerSecond times a second,
// waits for pairs while there are too few and for Resume while paused. It
// returns the first other error of Step.
func (a *Adapter) Run(ctx context.Context) error {
	interval := time.Duration(float64(time.Second) / a.opt.StepsPerSecond)
	next := time.Now()
	timer := time.NewTimer(0)
	defer timer.Stop()
	for {
		timer.Reset(time.Until(next))
		if ok, err := a.await(ctx, timer.C); !ok {
			return err
		}
		err := a.Step(ctx)
		switch {
		case err == nil:
		case errors.Is(err, ErrTooFewFrames):
			if ok, err := a.await(ctx, nil); !ok {
				return err
			}
		case errors.Is(err, ErrPaused):
			select {
			case <-ctx.Done():
				return nil
			case <-a.resumed:
			}
		case ctx.Err() != nil:
			return nil
		default:
			return err
		}
		next = next.Add(interval)
		if now := time.Now(); next.Before(now) {
			next = now // no burst to catch up after a slow step or a wait
		}
	}
}

// await takes the pairs offered until tick fires, or with a nil tick the
// first one. It returns false when ctx ends first (with a nil error) or
// taking a pair fails.
func (a *Adapter) await(ctx context.Context, tick <-chan time.Time) (bool, error) {
	for {
		select {
		case <-ctx.Done():
			return false, nil
		case <-a.notify:
			if err := a.take(); err != nil {
				return false, err
			}
			if tick == nil {
				return true, nil
			}
		case <-tick:
			return true, nil
		}
	}
}

// Step takes the pending pair if there is one, then runs one training
// step and, every Options.StepsPerCheck steps, the check that swaps the
// candidate in or rolls it back. It returns ErrPaused while paused,
// ErrTooFewFrames while there is nothing to train on, and an error for a
// cancelled ctx or a failed graph run; a non-finite value is no error: it
// rolls back and pauses (see Status).
func (a *Adapter) Step(ctx context.Context) error {
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("adapt: %w", err)
	}
	a.stepping.Lock()
	defer a.stepping.Unlock()
	if err := a.ingest(); err != nil {
		return err
	}
	a.mu.Lock()
	paused := a.status.Paused
	a.mu.Unlock()
	if paused {
		return ErrPaused
	}
	pool := len(a.frames) - a.opt.HoldOut
	if pool < 1 {
		return ErrTooFewFrames
	}
	l, r := a.load(a.frames[a.rng.IntN(pool)])
	t, err := a.sess.Step(l, r)
	if errors.Is(err, train.ErrNonFiniteGradient) || (err == nil && !finite(t.Total)) {
		return a.rollback(true, fmt.Sprintf("non-finite training step (loss %v): %v", t.Total, err))
	}
	if err != nil {
		return err
	}
	a.mu.Lock()
	a.status.Steps++
	a.mu.Unlock()
	if a.since++; a.since >= a.opt.StepsPerCheck {
		a.since = 0
		return a.check()
	}
	return nil
}

// take ingests the pending pair.
func (a *Adapter) take() error {
	a.stepping.Lock()
	defer a.stepping.Unlock()
	return a.ingest()
}

// ingest takes the pending pair through the gates into the buffer,
// building the training graph for the first pair. It returns the error of
// building it. Called with a.stepping held.
func (a *Adapter) ingest() error {
	a.mu.Lock()
	p, ok := a.pending, a.hasPend
	a.pending, a.hasPend = [2]image.Image{}, false
	a.mu.Unlock()
	if !ok {
		return nil
	}
	if a.sess == nil {
		b := p[0].Bounds()
		if err := a.prepare(b.Dx(), b.Dy()); err != nil {
			return err
		}
	}
	g, err := a.admit(p[0], p[1])
	if err != nil {
		return err
	}
	a.mu.Lock()
	defer a.mu.Unlock()
	switch g {
	case gateLowContrast:
		a.status.LowContrast++
	case gateDuplicate:
		a.status.Duplicates++
	case gateSwapped:
		a.status.Swapped++
	default:
		a.status.Admitted++
		f := &frame{}
		if len(a.frames) == a.opt.Buffer {
			f.left, f.right = a.frames[0].left, a.frames[0].right // reused
			a.frames = append(a.frames[:0], a.frames[1:]...)
		}
		f.left, f.right = encode(f.left, a.tmp.left), encode(f.right, a.tmp.right)
		a.frames = append(a.frames, f)
		a.last = append(a.last[:0], a.tmp.grey...)
	}
	return nil
}

// admit resizes a pair into the scratch and runs the gates on it.
func (a *Adapter) admit(left, right image.Image) (gate, error) {
	if err := errors.Join(a.tmp.resize(a.tmp.left, left), a.tmp.resize(a.tmp.right, right)); err != nil {
		return gateOK, err
	}
	luma(a.tmp.grey, a.tmp.left)
	luma(a.tmp.greyR, a.tmp.right)
	return a.judgeFrame(a.tmp.grey, a.tmp.greyR), nil
}

// load decodes f into the scratch views that feed the training graph.
func (a *Adapter) load(f *frame) (left, right *planar.Image) {
	decode(a.tmp.left, f.left)
	decode(a.tmp.right, f.right)
	return a.tmp.left, a.tmp.right
}

// judgeFrame applies the contrast, duplicate and view-order gates to a
// pair's luma.
func (a *Adapter) judgeFrame(grey, greyR []float32) gate {
	if a.opt.MinContrast != GateOff && stdDev(grey) < a.opt.MinContrast {
		return gateLowContrast
	}
	if a.opt.MinChange != GateOff && a.last != nil && meanAbsDiff(grey, a.last) < a.opt.MinChange {
		return gateDuplicate
	}
	if !a.opt.KeepSwapped && viewsSwapped(grey, greyR, a.w, a.h, a.shift) {
		return gateSwapped
	}
	return gateOK
}
