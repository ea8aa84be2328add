package model

import (
	"context"
	"errors"
	"fmt"
	"image"
	"image/draw"
	"math"
	"runtime"
	"sync/atomic"

	xdraw "golang.org/x/image/draw"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/parallel"
	"github.com/parallaxdepth/parallax/planar"
)

// EstimatorOptions configures an Estimator. A nil *EstimatorOptions means
// the zero value, which is valid.
type EstimatorOptions struct {
	// Rig describes the cameras, at any image size of their aspect ratio: it
	// is rescaled to each input's size with Rig.Scaled, so Estimate refuses
	// an image whose aspect ratio differs by more than
	// depth.MaxAspectChange (a crop or another camera). If nil, Estimate
	// returns no metric depth.
	Rig *depth.Rig
	// StretchRig rescales the rig with Rig.Stretched instead, for images
	// that were resized from the rig's without keeping its aspect ratio.
	// Default false.
	StretchRig bool
	// Flip enables flip post-processing: the mirrored image is predicted
	// as well and the two are blended (see FlipBlend).
	// It costs a second forward pass. Default false.
	Flip bool
	// ConfidenceScale is τ in the confidence formula, in pixels at the
	// network's input width. If 0 it is defaulted to 1.
	ConfidenceScale float64
	// MaxWorkers bounds the number of forward passes that run at once; each
	// worker owns a Net for each of the last four network sizes it ran at
	// (15 MB of heap for a Net at 256×128 and 111 MB at 640×480, measured
	// by TestNetMemory) and is created on first need. If 0 it is
	// defaulted to runtime.GOMAXPROCS(0).
	MaxWorkers int
	// Resample scales the input image to the network's size. If nil it is
	// defaulted to golang.org/x/image/draw.CatmullRom, the filter package
	// model/data uses for training; that filter runs as planar.Resampler,
	// which gives its results bit for bit without an intermediate image.
	Resample xdraw.Interpolator
	// MaxSide caps the longer side of the network's input (see
	// NetworkSize). If 0 it is defaulted to DefaultMaxSide. A network size
	// far from the weights' training size costs accuracy: the stereo
	// weights of training/stereo at step 150 (trained at 256×128), on 20
	// varied greenhouse and orchard pairs rendered at 512×256, scored
	// 2.82 and 2.24 px EPE at MaxSide 256 (the images halved), 2.71 and
	// 1.91 at 384, 2.46 and 1.74 at 512 (native): at a size above the
	// training size the stereo network still gains from the detail, while
	// the one-image default weights, which learned one rig's scenes, scored
	// 9.5 to 20 px on these varied rigs at every MaxSide.
	MaxSide int
	// TrainingSize runs the network at the weights' own input size
	// (Config.Width × Config.Height) for every image, squashing other
	// aspect ratios, instead of at a size derived from each input.
	// Default false.
	TrainingSize bool
	// Validity sets the rules that mark pixels invalid: the rig's depth
	// range, a confidence threshold and a texture threshold (see
	// ValidityOptions; the zero value applies all three with their
	// defaults).
	Validity ValidityOptions
	// MaxScratchBytes caps the memory all workers hold together: their
	// Nets and per-call buffers, not the result maps handed to the caller
	// nor the input images. A worker is counted at the network size that
	// needs the most among those the Estimator may run (MaxSide, or the
	// weights' size with TrainingSize; see Estimator.WorkerBytes, which
	// follows the heap a worker takes within a few per cent), so the pool
	// has at most MaxScratchBytes / WorkerBytes workers, fewer than
	// MaxWorkers if need be, and each worker keeps only as many network
	// sizes as fit in WorkerBytes. A worker of the default network is
	// counted at 28 MiB at MaxSide 256 (a 256×256 network), 59 MiB at the
	// default 384 and 157 MiB at 640 (logged by TestMaxScratchBytes).
	// NewEstimator returns an error giving both figures and the network
	// size if one worker does not fit. If 0 there is no cap.
	MaxScratchBytes int64
}

// DefaultMaxSide is the default cap on the longer side of the network's
// input: 384 pixels, so that a 640×480 camera runs at 384×288 and the
// 370×250 Motorcycle pair at 384×256. Our choice for speed on two cores:
// the work grows with the pixel count, 3.4 times that of the 256×128
// training size at 384×288.
const DefaultMaxSide = 384

// NetworkSize returns the network input size for an image of width ×
// height with the longer side capped at maxSide (0 means DefaultMaxSide):
// the image is scaled by s = min(1, maxSide / longer side), keeping its
// aspect ratio, and each side is rounded to the nearest multiple of
// SizeStep (32), at least MinSide (64), so a very small or very elongated
// image changes its aspect ratio. The product of the sides is kept within
// MaxNetPixels. It returns an error for sides that are not positive or
// exceed planar's size limits, or a maxSide outside [MinSide,
// MaxNetPixels/MinSide].
func NetworkSize(width, height, maxSide int) (w, h int, err error) {
	if maxSide == 0 {
		maxSide = DefaultMaxSide
	}
	if maxSide < MinSide || maxSide > MaxNetPixels/MinSide {
		return 0, 0, fmt.Errorf("model: maximum network side %d must be in [%d, %d]", maxSide, MinSide, MaxNetPixels/MinSide)
	}
	if err := planar.CheckSize(width, height); err != nil {
		return 0, 0, fmt.Errorf("model: image: %w", err)
	}
	s := min(1, float64(maxSide)/float64(max(width, height)))
	round := func(v float64) int {
		return max(MinSide, int(math.Round(v/SizeStep))*SizeStep)
	}
	for {
		w, h = round(float64(width)*s), round(float64(height)*s)
		if w*h <= MaxNetPixels && max(w, h) <= max(maxSide, MinSide) {
			return w, h, nil
		}
		s *= 0.97
	}
}

// Estimate is the result of Estimator.Estimate for one image, at the
// input's resolution, bounds (0, 0)–(W, H) of the input image.
type Estimate struct {
	// Disparity is the left view's disparity in pixels at the input's
	// width.
	Disparity *depth.Disparity
	// Confidence is the left-right agreement in [0, 1] (see LRConfidence),
	// computed at the network's size and resampled.
	Confidence *depth.Confidence
	// Depth is the metric depth in metres, or nil if the Estimator has no
	// rig.
	Depth *depth.Depth
	// Rig is the Estimator's rig scaled to the input's size, or nil; each
	// Estimate has its own copy.
	Rig *depth.Rig
	// NetworkSize is the size the network ran at (Estimator.NetworkSize),
	// zero for an estimate that no network made.
	NetworkSize image.Point
}

// Estimator turns images of any size into disparity, confidence and metric
// depth with one set of weights of either kind: single left images with
// one-image weights (Estimate), rectified pairs with stereo weights
// (EstimatePair); each call of the other kind is an error naming the
// weights' kind (Kind).
//
// Each image is resampled to a network size derived from it (NetworkSize:
// aspect ratio kept, multiples of 32, the longer side capped by
// EstimatorOptions.MaxSide), or to the weights' own size with TrainingSize,
// run through the network, and its full-resolution disparities
// d_L and d_R (fractions of the width) are post-processed at that size:
// with Flip, d_L is blended with the mirrored image's prediction
// (FlipBlend); the confidence compares d_L with d_R warped into the left
// view (LRConfidence). Disparity and confidence are then resampled
// linearly to the input's size (pixel centres as in depth.Rig.Scaled),
// disparity becomes pixels at the input's width, and depth follows from
// the rig rescaled to the input's size.
//
// Concurrency: an Estimator is safe for concurrent use by many goroutines:
// each call borrows a worker (a Net and its scratch buffers for each of the
// last few network sizes it ran at) from a pool of at most MaxWorkers and
// returns it, so calls beyond MaxWorkers wait (or give up when their
// context ends).
type Estimator struct {
	weights    atomic.Pointer[Weights] // swapped whole by SetWeights (estimator_swap.go)
	arch       *Arch
	rig        *depth.Rig
	stretchRig bool
	flip       bool
	tau        float64
	resize     xdraw.Interpolator
	maxSide    int
	fixed      bool
	validity   ValidityOptions
	pool       *parallel.Pool[worker]
	workers    int // the pool's size
	// workerBytes is what one worker may hold (largestStage); with
	// capped set, a worker's stages stay within it.
	workerBytes int64
	capped      bool
}

// worker holds a Net and the buffers of one call for each network size it
// has run at (at most maxStages, the least recently used dropped, and
// within Estimator.workerBytes under MaxScratchBytes).
type worker struct {
	stages []*stage
}

const maxStages = 4

// stage holds everything one call writes at one network size.
type stage struct {
	w, h     int
	bytes    int64 // stageBytes
	net      *Net
	params   *Weights          // the weights net was built from
	scaled   *image.RGBA64     // with a Resample filter of the caller's
	resample *planar.Resampler // otherwise
	in, flip *planar.Image
	right    *planar.Image // stereo: the right view
	dl, dr   []float32     // blended left and original right disparity, fractions
	mirrored []float32     // the mirrored prediction's channel 0, mirrored back
	warped   []float32
	valid    []float32
	conf     []float32
}

// NewEstimator returns an Estimator that runs the weights w; nil means the
// embedded default weights (see Default). It keeps references to w's
// parameter slices. It returns an error if w does not fit its architecture
// or an option is out of range.
func NewEstimator(w *Weights, opt *EstimatorOptions) (*Estimator, error) {
	var o EstimatorOptions
	if opt != nil {
		o = *opt
	}
	if w == nil {
		var err error
		if w, err = Default(); err != nil {
			return nil, err
		}
	}
	a, err := w.Arch()
	if err != nil {
		return nil, err
	}
	if err := w.check(a); err != nil {
		return nil, err
	}
	if o.Rig != nil {
		if err := o.Rig.Validate(); err != nil {
			return nil, fmt.Errorf("model: estimator rig: %w", err)
		}
		r := *o.Rig
		o.Rig = &r
	}
	if o.ConfidenceScale == 0 {
		o.ConfidenceScale = 1
	}
	if math.IsNaN(o.ConfidenceScale) || math.IsInf(o.ConfidenceScale, 0) || o.ConfidenceScale < 0 {
		return nil, fmt.Errorf("model: confidence scale %v must be positive and finite", o.ConfidenceScale)
	}
	if o.MaxWorkers == 0 {
		o.MaxWorkers = runtime.GOMAXPROCS(0)
	}
	if o.MaxWorkers < 0 || o.MaxWorkers > 1024 {
		return nil, fmt.Errorf("model: MaxWorkers %d must be in [1, 1024]", o.MaxWorkers)
	}
	if o.Resample == xdraw.CatmullRom {
		o.Resample = nil // planar.Resampler computes the same, faster
	}
	if o.Validity, err = o.Validity.resolve(); err != nil {
		return nil, err
	}
	if o.MaxSide == 0 {
		o.MaxSide = DefaultMaxSide
	}
	if _, _, err := NetworkSize(MinSide, MinSide, o.MaxSide); err != nil {
		return nil, err
	}
	if o.MaxScratchBytes < 0 {
		return nil, fmt.Errorf("model: MaxScratchBytes %d must not be negative (0 means no cap)", o.MaxScratchBytes)
	}
	e := &Estimator{arch: a, rig: o.Rig, stretchRig: o.StretchRig, flip: o.Flip, tau: o.ConfidenceScale, resize: o.Resample, validity: o.Validity,
		maxSide: o.MaxSide, fixed: o.TrainingSize, workers: o.MaxWorkers, capped: o.MaxScratchBytes > 0}
	lw, lh, need, err := e.largestStage(a.Config)
	if err != nil {
		return nil, err
	}
	e.workerBytes = need
	if e.capped {
		if need > o.MaxScratchBytes {
			return nil, fmt.Errorf("model: one worker needs %s (%d bytes) of scratch at network size %dx%d, the largest this Estimator may run, more than MaxScratchBytes %s (%d bytes); lower MaxSide or raise the cap",
				mib(need), need, lw, lh, mib(o.MaxScratchBytes), o.MaxScratchBytes)
		}
		e.workers = int(min(int64(o.MaxWorkers), o.MaxScratchBytes/need))
	}
	e.pool = parallel.NewPool[worker](e.workers)
	e.weights.Store(w)
	// Build the first worker now, at the weights' size, so that an engine
	// error shows here, not on the first image.
	wk := &worker{}
	if _, err := e.stage(wk, w, a.Input.W, a.Input.H); err != nil {
		return nil, err
	}
	e.pool.Add(wk)
	return e, nil
}

// Workers returns the most forward passes the Estimator runs at once:
// MaxWorkers, or fewer under MaxScratchBytes.
func (e *Estimator) Workers() int { return e.workers }

// WorkerBytes returns the scratch memory one worker is counted to need: its
// Net and per-call buffers at the network size that needs the most among
// those the Estimator may run (including the weights' own size, at which
// NewEstimator builds the first worker). It is counted from the
// architecture (the liveness plan's buffers, the engine's workspaces, and
// for stereo weights the classical matcher's), whether or not
// MaxScratchBytes is set.
func (e *Estimator) WorkerBytes() int64 { return e.workerBytes }

// Weights returns the weights the Estimator runs (shared, not a copy).
func (e *Estimator) Weights() *Weights { return e.weights.Load() }

// Kind returns the kind of the Estimator's weights: "stereo" (call
// EstimatePair) or "one-image" (call Estimate).
func (e *Estimator) Kind() string { return e.arch.Kind() }

// NetworkSize returns the size the network runs at for an image of width ×
// height: the weights' own size with EstimatorOptions.TrainingSize, else
// the package function NetworkSize with the Estimator's MaxSide.
func (e *Estimator) NetworkSize(width, height int) (w, h int, err error) {
	if e.fixed {
		if _, _, err := NetworkSize(width, height, e.maxSide); err != nil {
			return 0, 0, err
		}
		return e.arch.Input.W, e.arch.Input.H, nil
	}
	return NetworkSize(width, height, e.maxSide)
}

// stage returns wk's buffers for the network size w × h running the
// weights p, made on first need (a stage built from other weights, which
// SetWeights allows only with the same Config, is pointed at p's
// parameters: a swap allocates nothing); the least recently used size is
// dropped beyond maxStages.
func (e *Estimator) stage(wk *worker, p *Weights, w, h int) (*stage, error) {
	for i, st := range wk.stages {
		if st.w == w && st.h == h {
			if st.params != p {
				st.net.setParams(p)
				st.params = p
			}
			copy(wk.stages[1:i+1], wk.stages[:i])
			wk.stages[0] = st
			return st, nil
		}
	}
	c := p.Config
	c.Width, c.Height = w, h
	a, err := Build(c)
	if err != nil {
		return nil, err
	}
	bytes := stageBytes(a)
	if e.capped {
		// Make room within the worker's share before allocating.
		held := bytes
		for _, st := range wk.stages {
			held += st.bytes
		}
		for len(wk.stages) > 0 && held > e.workerBytes {
			held -= wk.stages[len(wk.stages)-1].bytes
			wk.stages = wk.stages[:len(wk.stages)-1]
		}
		if held > e.workerBytes {
			return nil, fmt.Errorf("model: network size %dx%d needs %s of scratch, more than the %s a worker may hold", w, h, mib(bytes), mib(e.workerBytes))
		}
	}
	net, err := NewNet(&Weights{Config: c, Params: p.Params}, 1)
	if err != nil {
		return nil, err
	}
	n := h * w
	st := &stage{
		w: w, h: h, bytes: bytes, net: net, params: p,
		in: planar.New(1, 3, h, w),
		dl: make([]float32, n), dr: make([]float32, n), mirrored: make([]float32, n),
		warped: make([]float32, n), valid: make([]float32, n), conf: make([]float32, n),
	}
	if e.resize != nil {
		st.scaled = image.NewRGBA64(image.Rect(0, 0, w, h))
	} else if st.resample, err = planar.NewResampler(w, h); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	if e.arch.IsStereo() {
		st.right = planar.New(1, 3, h, w)
	} else {
		st.flip = planar.New(1, 3, h, w)
	}
	if len(wk.stages) == maxStages {
		wk.stages = wk.stages[:maxStages-1]
	}
	wk.stages = append([]*stage{st}, wk.stages...)
	return st, nil
}

func (e *Estimator) acquire(ctx context.Context) (*worker, error) {
	wk, err := e.pool.Get(ctx, func() *worker { return &worker{} })
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	return wk, nil
}

func (e *Estimator) release(wk *worker) { e.pool.Put(wk) }

// checkImage returns an error for a nil, empty or oversized image.
func checkImage(img image.Image) (image.Rectangle, error) {
	if img == nil {
		return image.Rectangle{}, errors.New("model: image is nil")
	}
	b := img.Bounds()
	if b.Empty() {
		return b, fmt.Errorf("model: image is empty (bounds %v)", b)
	}
	w, h := b.Dx(), b.Dy()
	if w > planar.MaxSide || h > planar.MaxSide || w*h > planar.MaxPixels {
		return b, fmt.Errorf("model: image size %dx%d is too large (sides up to %d, at most %d pixels)", w, h, planar.MaxSide, planar.MaxPixels)
	}
	return b, nil
}

// Estimate predicts the left view's disparity of img (any size, any
// bounds) with one-image weights, with its confidence and, if the Estimator
// has a rig, its metric depth, all at img's resolution. The network runs at
// the size NetworkSize gives for img. The context is checked before the
// work starts, while waiting for a worker and between the forward passes
// and the post-processing; a cancelled call returns an error wrapping
// ctx.Err(). It returns an error for a nil, empty or oversized image, or
// for stereo weights (use EstimatePair).
func (e *Estimator) Estimate(ctx context.Context, img image.Image) (*Estimate, error) {
	if e.arch.IsStereo() {
		return nil, errors.New("model: these are stereo weights: give both views (EstimatePair)")
	}
	return e.estimate(ctx, img, nil)
}

// EstimatePair predicts the left view's disparity of the rectified pair
// left, right (equal sizes, any bounds) with stereo weights, and returns the
// same Estimate as Estimate: disparity, the left-right confidence of the
// network's two outputs, metric depth with a rig, at the images'
// resolution. Flip does not apply: the network already sees the mirrored
// pair. Whether the pair is rectified is not checked. It returns an error
// for a nil, empty or oversized image, views of different sizes, one-image
// weights (use Estimate), or a cancelled ctx.
func (e *Estimator) EstimatePair(ctx context.Context, left, right image.Image) (*Estimate, error) {
	if !e.arch.IsStereo() {
		return nil, errors.New("model: these are one-image weights: give the left image alone (Estimate)")
	}
	if right == nil {
		return nil, errors.New("model: right image is nil")
	}
	if left != nil && left.Bounds().Size() != right.Bounds().Size() {
		lb, rb := left.Bounds(), right.Bounds()
		return nil, fmt.Errorf("model: the left image is %dx%d and the right %dx%d: the views must have the same size", lb.Dx(), lb.Dy(), rb.Dx(), rb.Dy())
	}
	return e.estimate(ctx, left, right)
}

func (e *Estimator) estimate(ctx context.Context, img, right image.Image) (*Estimate, error) {
	b, err := checkImage(img)
	if err != nil {
		return nil, err
	}
	nw, nh, err := e.NetworkSize(b.Dx(), b.Dy())
	if err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	var rig *depth.Rig
	if e.rig != nil {
		// Estimate.Rig belongs to the caller: never hand out e.rig itself,
		// which every call reads.
		if e.rig.Width == b.Dx() && e.rig.Height == b.Dy() {
			r := *e.rig
			rig = &r
		} else if e.stretchRig {
			if rig, err = e.rig.Stretched(b.Dx(), b.Dy()); err != nil {
				return nil, fmt.Errorf("model: %w", err)
			}
		} else if rig, err = e.rig.Scaled(b.Dx(), b.Dy()); err != nil {
			return nil, fmt.Errorf("model: %w", err)
		}
	}
	wk, err := e.acquire(ctx)
	if err != nil {
		return nil, err
	}
	defer e.release(wk)
	// One load per call: the whole call runs one set of weights.
	st, err := e.stage(wk, e.weights.Load(), nw, nh)
	if err != nil {
		return nil, err
	}
	if right != nil {
		err = e.predictPair(st, img, right)
	} else {
		err = e.predict(ctx, st, img)
	}
	if err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	return e.finish(st, b.Dx(), b.Dy(), rig)
}

// predict fills st.dl, st.dr and st.conf at the network's size.
func (e *Estimator) predict(ctx context.Context, st *stage, img image.Image) error {
	if err := e.toInput(st, st.in, img); err != nil {
		return err
	}
	if err := e.forward(st, st.in, st.dl, st.dr); err != nil {
		return err
	}
	h, w := st.h, st.w
	if e.flip {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("model: %w", err)
		}
		mirrorPlanes(st.flip.Pix, st.in.Pix, 3*h, w)
		// The mirrored image's channel 0 is the disparity of its own
		// pixels; mirrored back it estimates d_L (see FlipBlend).
		if err := e.forward(st, st.flip, st.mirrored, nil); err != nil {
			return err
		}
		mirrorPlanes(st.warped, st.mirrored, h, w)
		FlipBlend(st.dl, st.dl, st.warped, h, w)
	}
	LRConfidence(st.conf, st.warped, st.valid, st.dl, st.dr, h, w, e.tau)
	return nil
}

// predictPair fills st.dl, st.dr and st.conf at the network's size from a
// stereo network.
func (e *Estimator) predictPair(st *stage, left, right image.Image) error {
	if err := e.toInput(st, st.in, left); err != nil {
		return err
	}
	if err := e.toInput(st, st.right, right); err != nil {
		return err
	}
	outs, err := st.net.ForwardPair(st.in, st.right)
	if err != nil {
		return err
	}
	n := st.h * st.w
	copy(st.dl, outs[0].Pix[:n])
	copy(st.dr, outs[0].Pix[n:2*n])
	LRConfidence(st.conf, st.warped, st.valid, st.dl, st.dr, st.h, st.w, e.tau)
	return nil
}

// forward runs the Net on in and copies disp0's channels into left and, if
// not nil, right.
func (e *Estimator) forward(st *stage, in *planar.Image, left, right []float32) error {
	outs, err := st.net.Forward(in)
	if err != nil {
		return err
	}
	d := outs[0]
	n := d.H * d.W
	copy(left, d.Pix[:n])
	if right != nil {
		copy(right, d.Pix[n:2*n])
	}
	return nil
}

// toInput resamples img to the network's size into in, RGB in [0, 1] with
// alpha divided out, as model/data does for training.
func (e *Estimator) toInput(st *stage, in *planar.Image, img image.Image) error {
	if st.resample != nil {
		if err := st.resample.Scale(in, img); err != nil {
			return fmt.Errorf("model: %w", err)
		}
		return nil
	}
	dst := st.scaled
	b := img.Bounds()
	if b.Dx() == dst.Rect.Dx() && b.Dy() == dst.Rect.Dy() {
		draw.Draw(dst, dst.Rect, img, b.Min, draw.Src)
	} else {
		e.resize.Scale(dst, dst.Rect, img, b, xdraw.Src, nil)
	}
	if err := planar.FromImageInto(in, dst); err != nil {
		return fmt.Errorf("model: %w", err)
	}
	return nil
}

// finish resamples the network-size results to width × height and builds
// the maps.
func (e *Estimator) finish(st *stage, width, height int, rig *depth.Rig) (*Estimate, error) {
	r := image.Rect(0, 0, width, height)
	disp, err := depth.NewDisparity(r)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	conf, err := depth.NewConfidence(r)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	h, w := st.h, st.w
	resizeBilinear(disp.Pix, st.dl, w, h, width, height)
	resizeBilinear(conf.Pix, st.conf, w, h, width, height)
	scale := float32(width)
	for i, f := range disp.Pix {
		px := f * scale
		if px > 0 && px <= math.MaxFloat32 {
			disp.Pix[i], disp.Mask[i] = px, 1
		} else {
			disp.Pix[i], disp.Mask[i] = 0, 0
		}
	}
	for i, c := range conf.Pix {
		conf.Pix[i] = min(max(c, 0), 1)
		conf.Mask[i] = 1
	}
	est := &Estimate{Disparity: disp, Confidence: conf, Rig: rig, NetworkSize: image.Pt(st.w, st.h)}
	if rig != nil {
		if est.Depth, err = rig.DisparityToDepth(disp); err != nil {
			return nil, fmt.Errorf("model: %w", err)
		}
	}
	applyValidity(est, st.in, e.validity) // validity.go
	return est, nil
}
