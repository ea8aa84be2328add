package evaluation

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"

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

type network struct{ e *model.Estimator }

func (m network) EstimatePair(ctx context.Context, left, right image.Image) (*model.Estimate, error) {
	if m.e.Kind() == model.KindStereo {
		return m.e.EstimatePair(ctx, left, right)
	}
	return m.e.Estimate(ctx, left)
}

// Network returns the Method that runs e: one-image weights see the left
// image alone (the right is not used), stereo weights both views
// (Estimator.EstimatePair).
func Network(e *model.Estimator) Method { return network{e} }

type matcher struct {
	m       *sgm.Matcher
	rig     *depth.Rig
	stretch bool
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
	fit := m.rig.Scaled
	if m.stretch {
		fit = m.rig.Stretched
	}
	r, err := fit(b.Dx(), b.Dy())
	if err != nil {
		return nil, err
	}
	return e, e.SetRig(r)
}

// SGM returns the Method that runs the semi-global matcher m on both
// images; with a rig (rescaled to each pair's size, see depth.Rig.Scaled)
// it also gives metric depth, with the rig's depth range applied
// (model.Estimate.SetRig). The matcher's holes stay holes: choose how to
// score them with ScoreOptions.Holes.
func SGM(m *sgm.Matcher, rig *depth.Rig) Method { return matcher{m: m, rig: rig} }

// ScoreMethod scores method on every pair of set like Score does for
// weights; opt.Flip is not used (it belongs to the weights' Estimator).
func ScoreMethod(ctx context.Context, method Method, set *dataset.Set, opt *ScoreOptions) (*Report, error) {
	if method == nil {
		return nil, errors.New("evaluation: the method is nil")
	}
	o, err := resolve(set, opt)
	if err != nil {
		return nil, err
	}
	return score(ctx, method, set, &o)
}

// resolve returns opt with its defaults, or an error for bad options or a
// set with nothing to score.
func resolve(set *dataset.Set, opt *ScoreOptions) (ScoreOptions, error) {
	var o ScoreOptions
	if opt != nil {
		o = *opt
	}
	if o.Workers == 0 {
		o.Workers = 1
	}
	if o.Workers < 0 {
		return o, fmt.Errorf("evaluation: %d workers: want at least 1", o.Workers)
	}
	if set == nil || len(set.Pairs) == 0 {
		return o, errors.New("evaluation: the data set has no pairs")
	}
	if disp, z := Scorable(set); !disp && !z {
		return o, fmt.Errorf("evaluation: %s has no truth/disp_left, nor truth/depth_left with a rig, to score against", name(set))
	}
	return o, nil
}

// ScoreRules scores method on every pair of set once, like ScoreMethod,
// and reports the disparity measures under each of the hole rules:
// reports[i] has rules[i] (opt.Holes is not used) and every report the same
// depth measures. It is an error to give no rule. opt.Inspect sees the
// scores under rules[0].
func ScoreRules(ctx context.Context, method Method, set *dataset.Set, opt *ScoreOptions, rules ...Holes) ([]*Report, error) {
	if len(rules) == 0 {
		return nil, errors.New("evaluation: ScoreRules without a hole rule")
	}
	var o ScoreOptions
	if opt != nil {
		o = *opt
	}
	o.Holes = rules[0]
	extra := make([]struct {
		scores []depth.DisparityMetrics
		empty  []string
		mean   depth.DisparityMean
	}, len(rules)-1)
	inspect := o.Inspect
	o.Inspect = func(s *PairScore, e *model.Estimate, r *dataset.Record) error {
		for i := range extra {
			if r.DispLeft == nil {
				continue
			}
			d, err := rules[i+1].apply(e.Disparity)
			if err != nil {
				return fmt.Errorf("evaluation: pair %s: %w", s.Name, err)
			}
			m, empty, err := disparityScore(d, r.DispLeft)
			if err != nil {
				return fmt.Errorf("evaluation: pair %s: %w", s.Name, err)
			}
			if empty {
				extra[i].empty = append(extra[i].empty, s.Name)
			}
			extra[i].scores = append(extra[i].scores, m)
			extra[i].mean.Add(m)
		}
		if inspect != nil {
			return inspect(s, e, r)
		}
		return nil
	}
	rep, err := ScoreMethod(ctx, method, set, &o)
	if err != nil {
		return nil, err
	}
	reps := []*Report{rep}
	for i, x := range extra {
		r := *rep
		r.Holes, r.Pairs, r.EmptyDisparity = rules[i+1], slices.Clone(rep.Pairs), x.empty
		if r.HasDisparity {
			for k := range r.Pairs {
				r.Pairs[k].Disparity = x.scores[k]
			}
			r.Disparity = x.mean.Mean()
		}
		reps = append(reps, &r)
	}
	return reps, nil
}

// disparityScore scores d against gt; a pair without any counted pixel is
// empty, with NaN measures.
func disparityScore(d, gt *depth.Disparity) (m depth.DisparityMetrics, empty bool, err error) {
	m, err = depth.DisparityErrors(d, gt)
	if errors.Is(err, depth.ErrNoValidPixels) {
		nan := math.NaN()
		return depth.DisparityMetrics{EPE: nan, Bad1: nan, Bad2: nan, Bad3: nan}, true, nil
	}
	return m, false, err
}

// Notes returns one line for each measure with empty pairs, naming them.
func (r *Report) Notes() []string {
	var out []string
	for _, e := range []struct {
		what  string
		names []string
	}{{"disparity", r.EmptyDisparity}, {"depth", r.EmptyDepth}} {
		if len(e.names) > 0 {
			out = append(out, fmt.Sprintf("%d pairs have no pixel with a valid %s estimate and truth (pixels 0, NaN in the tables; left out of the mean): %s",
				len(e.names), e.what, strings.Join(e.names, ", ")))
		}
	}
	return out
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
		return "valid pixels only (holes excluded)"
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
	c := d.Clone()
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

// MethodOptions configure NewMethod. A nil *MethodOptions means the
// defaults.
type MethodOptions struct {
	// Rig, if not nil, gives the semi-global matcher its disparity range
	// (sgm.Options.Rig).
	Rig *depth.Rig
	// Depth makes the Method's estimates carry metric depth from Rig,
	// rescaled to each image with depth.Rig.Scaled, or with Stretched if
	// StretchRig (see model.EstimatorOptions). Leave it off for ScoreMethod,
	// which sets each pair's own rig (model.Estimate.SetRig).
	Depth, StretchRig bool
	// Flip turns on the network's flip post-processing (one-image weights
	// only: stereo weights already see the mirrored pair). Default false.
	Flip bool
	// FillHoles fills the matcher's holes along the scan line
	// (sgm.Options.FillHoles); the network has none. Default false.
	FillHoles bool
	// Validity sets the network's validity rules
	// (model.EstimatorOptions.Validity; the zero value: the defaults).
	// The matcher has its own checks and does not use it.
	Validity model.ValidityOptions
}

// SGMTitle describes the "sgm" method of NewMethod for titles and summaries.
const SGMTitle = "semi-global matching (package sgm, default options, disparity range from the rig)"

// Methods lists the names NewMethod knows, in the order a usage text gives
// them.
var Methods = []string{"network", "sgm"}

// NewMethod returns the Method named name: "network" runs the weights w
// (nil: the embedded one-image default) through model.Estimator (see
// Network), "sgm" the semi-global matcher with its default options on both
// images. It returns an error for an unknown name, an option that does not
// belong to the method (Flip with sgm or with stereo weights, FillHoles
// with the network), weights given to sgm, Depth without a rig, or bad
// weights.
func NewMethod(name string, w *model.Weights, opt *MethodOptions) (Method, error) {
	var o MethodOptions
	if opt != nil {
		o = *opt
	}
	if o.Depth && o.Rig == nil {
		return nil, errors.New("evaluation: MethodOptions.Depth needs a rig")
	}
	switch name {
	case "network":
		if o.FillHoles {
			return nil, errors.New("evaluation: filling holes belongs to sgm; the network leaves none to fill")
		}
		if w == nil {
			var err error
			if w, err = model.Default(); err != nil {
				return nil, fmt.Errorf("evaluation: %w", err)
			}
		}
		if a, err := w.Arch(); err == nil && a.IsStereo() && o.Flip {
			return nil, errors.New("evaluation: flip post-processing is for one-image weights; stereo weights already see the mirrored pair")
		}
		eo := &model.EstimatorOptions{Flip: o.Flip, Validity: o.Validity}
		if o.Depth {
			eo.Rig, eo.StretchRig = o.Rig, o.StretchRig
		}
		est, err := model.NewEstimator(w, eo)
		if err != nil {
			return nil, fmt.Errorf("evaluation: %w", err)
		}
		return Network(est), nil
	case "sgm":
		if o.Flip {
			return nil, errors.New("evaluation: flip post-processing belongs to the network, not to sgm")
		}
		if w != nil {
			return nil, errors.New("evaluation: sgm takes no weights")
		}
		m, err := sgm.NewMatcher(&sgm.Options{Rig: o.Rig, FillHoles: o.FillHoles})
		if err != nil {
			return nil, fmt.Errorf("evaluation: %w", err)
		}
		if o.Depth {
			return matcher{m: m, rig: o.Rig, stretch: o.StretchRig}, nil
		}
		return SGM(m, nil), nil
	}
	return nil, fmt.Errorf("evaluation: unknown method %q (%s)", name, strings.Join(Methods, " or "))
}

// ErrorMaps returns a ScoreOptions.Inspect function that writes the error
// maps of each pair into the folder dir (created if missing), for the truth
// the pair has: NAME.disp-error.png, |d̂ − d| over 0 … 3 px, and
// NAME.depth-error.png, |ẑ − z|/z over 0 … 0.25, coloured with
// depth.ColorError (bright = large, transparent = not scored). For an empty
// dir it returns nil: no maps.
func ErrorMaps(dir string) func(s *PairScore, e *model.Estimate, r *dataset.Record) error {
	if dir == "" {
		return nil
	}
	return func(s *PairScore, e *model.Estimate, r *dataset.Record) error { return saveErrorMaps(dir, s, e, r) }
}

func saveErrorMaps(dir string, s *PairScore, e *model.Estimate, r *dataset.Record) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return fmt.Errorf("evaluation: %w", err)
	}
	save := func(est, gt *depth.Map, suffix string, relative bool, top float64) error {
		img, err := depth.ColorError(est, gt, relative, top)
		if err != nil {
			return fmt.Errorf("evaluation: pair %s: %w", s.Name, err)
		}
		return depth.SavePNG(filepath.Join(dir, s.Name+suffix), img)
	}
	if r.DispLeft != nil && e.Disparity != nil {
		if err := save(&e.Disparity.Map, &r.DispLeft.Map, ".disp-error.png", false, 3); err != nil {
			return err
		}
	}
	if r.DepthLeft != nil && e.Depth != nil {
		return save(&e.Depth.Map, &r.DepthLeft.Map, ".depth-error.png", true, 0.25)
	}
	return nil
}
