package model

import (
	"context"
	"errors"
	"fmt"
	"image"
	"image/draw"
	"math"
	"runtime"

	xdraw "golang.org/x/image/draw"

	"github.com/parallaxdepth/parallax/depth"
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
	// worker owns one Net (a few MB at the default size) and is created on
	// first need. If 0 it is defaulted to runtime.GOMAXPROCS(0).
	MaxWorkers int
	// Resample scales the input image to the network's size. If nil it is
	// defaulted to golang.org/x/image/draw.CatmullRom, the filter package
	// model/data uses for training.
	Resample xdraw.Interpolator
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
}

// Estimator turns single left images of any size into disparity,
// confidence and metric depth with one set of weights.
//
// Each image is resampled to the network's input size (EstimatorOptions.
// Resample), run through the network, and its full-resolution disparities
// d_L and d_R (fractions of the width) are post-processed at that size:
// with Flip, d_L is blended with the mirrored image's prediction
// (FlipBlend); the confidence compares d_L with d_R warped into the left
// view (LRConfidence). Disparity and confidence are then resampled
// linearly to the input's size (pixel centres as in depth.Rig.Scaled),
// disparity becomes pixels at the input's width, and depth follows from
// the rig rescaled to the input's size.
//
// Concurrency: an Estimator is safe for
// concurrent use by many goroutines: each call borrows a worker (a Net and
// its scratch buffers) from a pool of at most MaxWorkers and returns it, so
// calls beyond MaxWorkers wait (or give up when their context ends).
type Estimator struct {
	weights    *Weights
	arch       *Arch
	rig        *depth.Rig
	stretchRig bool
	flip       bool
	tau        float64
	resize     xdraw.Interpolator
	idle       chan *worker
	tokens     chan struct{} // one per worker that may still be created
}

// worker holds everything one Estimate call writes at the network's size.
type worker struct {
	net      *Net
	scaled   *image.RGBA64
	in, flip *planar.Image
	dl, dr   []float32 // blended left and original right disparity, fractions
	mirrored []float32 // the mirrored prediction's channel 0, mirrored back
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
	if o.Resample == nil {
		o.Resample = xdraw.CatmullRom
	}
	e := &Estimator{weights: w, arch: a, rig: o.Rig, stretchRig: o.StretchRig, flip: o.Flip, tau: o.ConfidenceScale, resize: o.Resample,
		idle: make(chan *worker, o.MaxWorkers), tokens: make(chan struct{}, o.MaxWorkers)}
	for range o.MaxWorkers {
		e.tokens <- struct{}{}
	}
	// Build the first worker now so that an engine error shows here, not on
	// the first image.
	wk, err := e.newWorker()
	if err != nil {
		return nil, err
	}
	<-e.tokens
	e.idle <- wk
	return e, nil
}

// Weights returns the weights the Estimator runs (shared, not a copy).
func (e *Estimator) Weights() *Weights { return e.weights }

// InputSize returns the network's input size; images of other sizes are
// resampled to it.
func (e *Estimator) InputSize() (width, height int) { return e.arch.Input.W, e.arch.Input.H }

func (e *Estimator) newWorker() (*worker, error) {
	net, err := NewNet(e.weights, 1)
	if err != nil {
		return nil, err
	}
	h, w := e.arch.Input.H, e.arch.Input.W
	n := h * w
	return &worker{
		net:    net,
		scaled: image.NewRGBA64(image.Rect(0, 0, w, h)),
		in:     planar.New(1, 3, h, w), flip: planar.New(1, 3, h, w),
		dl: make([]float32, n), dr: make([]float32, n), mirrored: make([]float32, n),
		warped: make([]float32, n), valid: make([]float32, n), conf: make([]float32, n),
	}, nil
}

func (e *Estimator) acquire(ctx context.Context) (*worker, error) {
	select {
	case wk := <-e.idle:
		return wk, nil
	default:
	}
	select {
	case wk := <-e.idle:
		return wk, nil
	case <-e.tokens:
		wk, err := e.newWorker()
		if err != nil {
			e.tokens <- struct{}{}
			return nil, err
		}
		return wk, nil
	case <-ctx.Done():
		return nil, fmt.Errorf("model: %w", ctx.Err())
	}
}

func (e *Estimator) release(wk *worker) { e.idle <- wk }

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
// bounds), with its confidence and, if the Estimator has a rig, its metric
// depth, all at img's resolution. The context is checked before the work
// starts, while waiting for a worker and between the forward passes and the
// post-processing; a cancelled call returns an error wrapping ctx.Err().
// It returns an error for a nil, empty or oversized image.
func (e *Estimator) Estimate(ctx context.Context, img image.Image) (*Estimate, error) {
	b, err := checkImage(img)
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
	if err := e.predict(ctx, wk, img); err != nil {
		return nil, err
	}
	if err := ctx.Err(); err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	return e.finish(wk, b.Dx(), b.Dy(), rig)
}

// predict fills wk.dl, wk.dr and wk.conf at the network's size.
func (e *Estimator) predict(ctx context.Context, wk *worker, img image.Image) error {
	if err := e.toInput(wk, img); err != nil {
		return err
	}
	if err := e.forward(wk, wk.in, wk.dl, wk.dr); err != nil {
		return err
	}
	h, w := e.arch.Input.H, e.arch.Input.W
	if e.flip {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("model: %w", err)
		}
		mirrorPlanes(wk.flip.Pix, wk.in.Pix, 3*h, w)
		// The mirrored image's channel 0 is the disparity of its own
		// pixels; mirrored back it estimates d_L (see FlipBlend).
		if err := e.forward(wk, wk.flip, wk.mirrored, nil); err != nil {
			return err
		}
		mirrorPlanes(wk.warped, wk.mirrored, h, w)
		FlipBlend(wk.dl, wk.dl, wk.warped, h, w)
	}
	LRConfidence(wk.conf, wk.warped, wk.valid, wk.dl, wk.dr, h, w, e.tau)
	return nil
}

// forward runs the Net on in and copies disp0's channels into left and, if
// not nil, right.
func (e *Estimator) forward(wk *worker, in *planar.Image, left, right []float32) error {
	outs, err := wk.net.Forward(in)
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

// toInput resamples img to the network's size into wk.in, RGB in [0, 1]
// with alpha divided out, as model/data does for training.
func (e *Estimator) toInput(wk *worker, img image.Image) error {
	dst := wk.scaled
	b := img.Bounds()
	if b.Dx() == dst.Rect.Dx() && b.Dy() == dst.Rect.Dy() {
		draw.Draw(dst, dst.Rect, img, b.Min, draw.Src)
	} else {
		e.resize.Scale(dst, dst.Rect, img, b, xdraw.Src, nil)
	}
	if err := planar.FromImageInto(wk.in, dst); err != nil {
		return fmt.Errorf("model: %w", err)
	}
	return nil
}

// finish resamples the network-size results to width × height and builds
// the maps.
func (e *Estimator) finish(wk *worker, width, height int, rig *depth.Rig) (*Estimate, error) {
	r := image.Rect(0, 0, width, height)
	disp, err := depth.NewDisparity(r)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	conf, err := depth.NewConfidence(r)
	if err != nil {
		return nil, fmt.Errorf("model: %w", err)
	}
	h, w := e.arch.Input.H, e.arch.Input.W
	resizeBilinear(disp.Pix, wk.dl, w, h, width, height)
	resizeBilinear(conf.Pix, wk.conf, w, h, width, height)
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
	est := &Estimate{Disparity: disp, Confidence: conf, Rig: rig}
	if rig != nil {
		if est.Depth, err = rig.DisparityToDepth(disp); err != nil {
			return nil, fmt.Errorf("model: %w", err)
		}
	}
	e.applyValidity(est) // validity.go
	return est, nil
}
