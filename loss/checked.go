package loss

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// checkImage returns an error naming the problem if im is nil, empty,
// inconsistent, has a channel count other than channels (0 accepts any), or
// holds NaN or Inf.
func checkImage(term, what string, im *planar.Image, channels int) error {
	if err := im.Check(what); err != nil {
		return fmt.Errorf("loss: %s: %w", term, err)
	}
	if channels > 0 && im.C != channels {
		return fmt.Errorf("loss: %s: %s must have %d channel(s), has %d", term, what, channels, im.C)
	}
	if err := im.CheckFinite(what); err != nil {
		return fmt.Errorf("loss: %s: %w", term, err)
	}
	return nil
}

// checkPlaneOf returns an error unless the single-channel map m has the
// batch size and resolution of im.
func checkPlaneOf(term, what string, m *planar.Image, imWhat string, im *planar.Image) error {
	if m.N != im.N || m.H != im.H || m.W != im.W {
		return fmt.Errorf("loss: %s: %s shape %s does not match %s shape %s", term, what, m.Shape(), imWhat, im.Shape())
	}
	return nil
}

func shapeOf(im *planar.Image) Shape { return Shape{N: im.N, C: im.C, H: im.H, W: im.W} }

func finiteResult(term string, v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("loss: %s: value is %v although the inputs are finite (values too large?)", term, v)
	}
	return nil
}

// SSIM returns the per-pixel, per-channel SSIM map of x and y (see
// SSIMKernel; data range 1). It returns an error if an image is nil, empty
// or holds NaN or Inf, or the shapes differ.
func SSIM(x, y *planar.Image) (*planar.Image, error) {
	if err := checkImage("ssim", "first image", x, 0); err != nil {
		return nil, err
	}
	if err := checkImage("ssim", "second image", y, 0); err != nil {
		return nil, err
	}
	if !x.SameShape(y) {
		return nil, fmt.Errorf("loss: ssim: image shapes differ: %s and %s", x.Shape(), y.Shape())
	}
	out := planar.New(x.N, x.C, x.H, x.W)
	var k SSIMKernel
	k.Forward(out.Pix, x.Pix, y.Pix, shapeOf(x))
	return out, nil
}

// Appearance returns the photometric appearance error of recon against
// target over the pixels where mask is 1 (see AppearanceKernel), and its
// gradient with respect to recon. mask (one channel) may be nil for all
// pixels valid. It returns an error if an image is nil, empty or holds NaN
// or Inf, the shapes differ, the mask has more than one channel or values
// outside [0, 1], or alpha is outside [0, 1].
func Appearance(target, recon, mask *planar.Image, alpha float64) (float64, *planar.Image, error) {
	const term = "appearance"
	if err := checkImage(term, "target image", target, 0); err != nil {
		return 0, nil, err
	}
	if err := checkImage(term, "reconstructed image", recon, 0); err != nil {
		return 0, nil, err
	}
	if !target.SameShape(recon) {
		return 0, nil, fmt.Errorf("loss: %s: target shape %s and reconstruction shape %s differ", term, target.Shape(), recon.Shape())
	}
	var m []float32
	if mask != nil {
		if err := checkImage(term, "mask", mask, 1); err != nil {
			return 0, nil, err
		}
		if err := checkPlaneOf(term, "mask", mask, "target image", target); err != nil {
			return 0, nil, err
		}
		for i, v := range mask.Pix {
			if v < 0 || v > 1 {
				return 0, nil, fmt.Errorf("loss: %s: mask value %v at index %d is outside [0, 1]", term, v, i)
			}
		}
		m = mask.Pix
	}
	if !(alpha >= 0 && alpha <= 1) {
		return 0, nil, fmt.Errorf("loss: %s: alpha %v is outside [0, 1]", term, alpha)
	}
	grad := planar.New(recon.N, recon.C, recon.H, recon.W)
	var k AppearanceKernel
	v := k.Eval(nil, grad.Pix, target.Pix, recon.Pix, m, shapeOf(target), float32(alpha))
	if err := finiteResult(term, v); err != nil {
		return 0, nil, err
	}
	return v, grad, nil
}

// checkMeans returns an error if an image of the batch disp has a mean
// that is not positive, which normalisation cannot divide by.
func checkMeans(term, what string, disp *planar.Image) error {
	plane := disp.H * disp.W
	for b := 0; b < disp.N; b++ {
		var sum float64
		for _, v := range disp.Pix[b*plane : (b+1)*plane] {
			sum += float64(v)
		}
		if !(sum > 0) {
			return fmt.Errorf("loss: %s: %s of image %d has mean %v; normalising needs a positive mean", term, what, b, sum/float64(plane))
		}
	}
	return nil
}

// Smoothness returns the edge-aware smoothness of disp (one channel)
// guided by img (see SmoothnessKernel) and its gradient with respect to
// disp. It returns an error if an image is nil, empty or holds NaN or Inf,
// disp has more than one channel or another batch size or resolution than
// img, or normalize is true and an image's mean disparity is not positive.
func Smoothness(disp, img *planar.Image, normalize bool) (float64, *planar.Image, error) {
	const term = "smoothness"
	if err := checkImage(term, "disparity", disp, 1); err != nil {
		return 0, nil, err
	}
	if err := checkImage(term, "image", img, 0); err != nil {
		return 0, nil, err
	}
	if err := checkPlaneOf(term, "disparity", disp, "image", img); err != nil {
		return 0, nil, err
	}
	if normalize {
		if err := checkMeans(term, "disparity", disp); err != nil {
			return 0, nil, err
		}
	}
	grad := planar.New(disp.N, 1, disp.H, disp.W)
	var k SmoothnessKernel
	v := k.Eval(grad.Pix, disp.Pix, img.Pix, shapeOf(img), normalize)
	if err := finiteResult(term, v); err != nil {
		return 0, nil, err
	}
	return v, grad, nil
}

// Consistency returns the left-right consistency of dispL and dispR (one
// channel each; see ConsistencyKernel) with warp border mode b, and the
// gradients with respect to both. It returns an error if a map is nil,
// empty or holds NaN or Inf, a map has more than one channel, the shapes
// differ, or b is not a defined border mode.
func Consistency(dispL, dispR *planar.Image, b warp.Border) (value float64, gradL, gradR *planar.Image, err error) {
	const term = "consistency"
	if err := checkImage(term, "left disparity", dispL, 1); err != nil {
		return 0, nil, nil, err
	}
	if err := checkImage(term, "right disparity", dispR, 1); err != nil {
		return 0, nil, nil, err
	}
	if !dispL.SameShape(dispR) {
		return 0, nil, nil, fmt.Errorf("loss: %s: left disparity shape %s and right disparity shape %s differ", term, dispL.Shape(), dispR.Shape())
	}
	if b != warp.Zero && b != warp.Clamp {
		return 0, nil, nil, fmt.Errorf("loss: %s: unknown border mode %v", term, b)
	}
	gradL = planar.New(dispL.N, 1, dispL.H, dispL.W)
	gradR = planar.New(dispL.N, 1, dispL.H, dispL.W)
	var k ConsistencyKernel
	value = k.Eval(gradL.Pix, gradR.Pix, dispL.Pix, dispR.Pix, shapeOf(dispL), b)
	if err := finiteResult(term, value); err != nil {
		return 0, nil, nil, err
	}
	return value, gradL, gradR, nil
}

// ScaleImages is one scale of the objective for EvalObjective: left and right
// images of one shape, and left and right disparities (one channel) of the
// same batch size and resolution.
type ScaleImages struct {
	Left, Right  *planar.Image
	DispL, DispR *planar.Image
}

// Gradients holds the gradients of the objective with respect to one
// scale's disparities.
type Gradients struct {
	DispL, DispR *planar.Image
}

// EvalObjective returns the weighted terms of the multi-scale objective
// (see Objective; a nil opts means the defaults) and its gradient with
// respect to every disparity. It returns an error if there is no scale, an
// image is nil, empty or holds NaN or Inf, shapes disagree within a scale,
// a disparity has more than one channel, an option is out of range (a
// weight negative other than TermOff or not finite, Alpha outside (0, 1] and
// not TermOff, an unknown Border), or smoothness normalisation meets a
// disparity whose mean is not positive.
func EvalObjective(scales []ScaleImages, opts *ObjectiveOptions) (Terms, []Gradients, error) {
	const term = "objective"
	if err := opts.Validate(); err != nil {
		return Terms{}, nil, err
	}
	o := opts.resolved()
	if len(scales) == 0 {
		return Terms{}, nil, fmt.Errorf("loss: %s: no scale given", term)
	}
	ks := make([]Scale, len(scales))
	grads := make([]Gradients, len(scales))
	kg := make([]DispGrad, len(scales))
	for i, sc := range scales {
		t := fmt.Sprintf("%s: scale %d", term, i)
		if err := checkImage(t, "left image", sc.Left, 0); err != nil {
			return Terms{}, nil, err
		}
		if err := checkImage(t, "right image", sc.Right, 0); err != nil {
			return Terms{}, nil, err
		}
		if !sc.Left.SameShape(sc.Right) {
			return Terms{}, nil, fmt.Errorf("loss: %s: left image shape %s and right image shape %s differ", t, sc.Left.Shape(), sc.Right.Shape())
		}
		for _, d := range []struct {
			what string
			im   *planar.Image
		}{{"left disparity", sc.DispL}, {"right disparity", sc.DispR}} {
			if err := checkImage(t, d.what, d.im, 1); err != nil {
				return Terms{}, nil, err
			}
			if err := checkPlaneOf(t, d.what, d.im, "left image", sc.Left); err != nil {
				return Terms{}, nil, err
			}
			if !o.RawSmoothness && o.Smoothness != 0 {
				if err := checkMeans(t, d.what, d.im); err != nil {
					return Terms{}, nil, err
				}
			}
		}
		ks[i] = Scale{Left: sc.Left.Pix, Right: sc.Right.Pix, DispL: sc.DispL.Pix, DispR: sc.DispR.Pix, Shape: shapeOf(sc.Left)}
		grads[i] = Gradients{DispL: planar.New(sc.DispL.N, 1, sc.DispL.H, sc.DispL.W), DispR: planar.New(sc.DispR.N, 1, sc.DispR.H, sc.DispR.W)}
		kg[i] = DispGrad{DispL: grads[i].DispL.Pix, DispR: grads[i].DispR.Pix}
	}
	obj := Objective{Options: opts}
	t := obj.Eval(nil, kg, ks)
	if err := finiteResult(term, t.Total); err != nil {
		return Terms{}, nil, err
	}
	return t, grads, nil
}
