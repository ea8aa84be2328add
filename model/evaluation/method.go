package evaluation

import (
	"context"
	"errors"
	"fmt"
	"image"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/sgm"
)

// Method is a way to estimate the left view of a rectified pair: what
// ScoreMethod scores. Its Estimate must have Disparity; Depth is needed
// only to score depth.
type Method interface {
	EstimatePair(ctx context.Context, left, right image.Image) (*model.Estimate, error)
}

type monocular struct{ e *model.Estimator }

func (m monocular) EstimatePair(ctx context.Context, left, right image.Image) (*model.Estimate, error) {
	if m.e.Kind() == "stereo" {
		return m.e.EstimatePair(ctx, left, right)
	}
	return m.e.Estimate(ctx, left)
}

// Monocular returns the Method that runs e on the left image alone (the
// right image is not used).
func Monocular(e *model.Estimator) Method { return monocular{e} }

type matcher struct {
	m   *sgm.Matcher
	rig *depth.Rig
}

func (m matcher) EstimatePair(ctx context.Context, left, right image.Image) (*model.Estimate, error) {
	res, err := m.m.Match(ctx, left, right)
	if err != nil {
		return nil, err
	}
	e := &model.Estimate{Disparity: res.Disparity, Confidence: res.Confidence}
	if m.rig == nil {
		return e, nil
	}
	b := res.Disparity.Rect
	if e.Rig, err = m.rig.Scaled(b.Dx(), b.Dy()); err != nil {
		return nil, err
	}
	if e.Depth, err = e.Rig.DisparityToDepth(res.Disparity); err != nil {
		return nil, err
	}
	return e, nil
}

// SGM returns the Method that runs the semi-global matcher m on both
// images; with a rig (rescaled to each pair's size, see depth.Rig.Scaled)
// it also gives metric depth. The matcher's holes stay holes: choose how to
// score them with ScoreOptions.Holes.
func SGM(m *sgm.Matcher, rig *depth.Rig) Method { return matcher{m, rig} }

// ScoreMethod scores method on every pair of set like Score does for
// weights; opt.Flip is not used (it belongs to the weights' Estimator).
func ScoreMethod(ctx context.Context, method Method, set *dataset.Set, opt *ScoreOptions) (*Report, error) {
	var o ScoreOptions
	if opt != nil {
		o = *opt
	}
	if o.Workers == 0 {
		o.Workers = 1
	}
	if o.Workers < 0 {
		return nil, fmt.Errorf("evaluation: %d workers: want at least 1", o.Workers)
	}
	if method == nil {
		return nil, errors.New("evaluation: the method is nil")
	}
	if set == nil || len(set.Pairs) == 0 {
		return nil, errors.New("evaluation: the data set has no pairs")
	}
	if disp, z := Scorable(set); !disp && !z {
		return nil, fmt.Errorf("evaluation: %s has no truth/disp_left, nor truth/depth_left with a rig, to score against", name(set))
	}
	return score(ctx, method, set, &o)
}

// Holes chooses how the disparity measures count the pixels where the
// estimate has no value (a network's masked pixels, a matcher's failed
// checks). Depth measures always count the pixels valid in both.
type Holes int

const (
	// HolesExcluded scores the pixels valid in both the estimate and the
	// truth; the coverage is the measure's N.
	HolesExcluded Holes = iota
	// HolesZero scores every pixel with truth, a hole as disparity 0.
	HolesZero
	// HolesFilled scores every pixel with truth, each hole filled along its
	// row first (sgm.FillHoles: the smaller of the nearest valid
	// disparities to its left and right), a row without any estimate as 0.
	HolesFilled
)

// String names h as the tables state it.
func (h Holes) String() string {
	switch h {
	case HolesExcluded:
		return "holes excluded"
	case HolesZero:
		return "holes as 0"
	case HolesFilled:
		return "holes filled along the scan line"
	}
	return fmt.Sprintf("Holes(%d)", int(h))
}

// apply returns d with its holes treated as h says: d itself for
// HolesExcluded, else a copy.
func (h Holes) apply(d *depth.Disparity) (*depth.Disparity, error) {
	switch h {
	case HolesExcluded:
		return d, nil
	case HolesZero, HolesFilled:
	default:
		return nil, fmt.Errorf("%v is not a hole rule", h)
	}
	c, err := depth.NewDisparity(d.Rect)
	if err != nil {
		return nil, err
	}
	for y := range d.Rect.Dy() {
		copy(c.Pix[y*c.Stride:y*c.Stride+d.Rect.Dx()], d.Pix[y*d.Stride:])
		copy(c.Mask[y*c.Stride:y*c.Stride+d.Rect.Dx()], d.Mask[y*d.Stride:])
	}
	if h == HolesFilled {
		if _, err := sgm.FillHoles(c); err != nil {
			return nil, err
		}
	}
	if _, err := sgm.ZeroHoles(c); err != nil {
		return nil, err
	}
	return c, nil
}
