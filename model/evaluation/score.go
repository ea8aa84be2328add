package evaluation

import (
	"context"
	"errors"
	"fmt"
	"math"
	"sync"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
)

// ScoreOptions configures Score. A nil *ScoreOptions means the zero value,
// which is valid.
type ScoreOptions struct {
	// Flip enables flip post-processing (model.EstimatorOptions.Flip).
	// Default false.
	Flip bool
	// Holes chooses how the disparity measures count the pixels where the
	// estimate has no value. Default HolesExcluded.
	Holes Holes
	// Workers is the number of pairs read and estimated at once; 0 means 1.
	// The report does not depend on it.
	Workers int
	// Progress, if not nil, is called after each pair with the number of
	// pairs done and the total, in pair order, from one goroutine.
	Progress func(done, total int)
	// Inspect, if not nil, is called after each pair is scored, in pair
	// order, with its score, the estimate and the record it was scored
	// against (for example to write error maps). An error it returns stops
	// Score, which returns it.
	Inspect func(s *PairScore, e *model.Estimate, r *dataset.Record) error
}

// PairScore holds the scores of one pair.
type PairScore struct {
	// Name is the pair's name.
	Name string
	// Disparity holds EPE and bad-K in pixels at the pair's width, if the
	// Report has disparity. N = 0 and NaN measures: no pixel was valid in
	// both the estimate and the truth.
	Disparity depth.DisparityMetrics
	// Depth holds the depth measures in metres, if the Report has depth;
	// N = 0 and NaN measures as for Disparity.
	Depth depth.DepthMetrics
}

// Report is the result of Score.
type Report struct {
	// Pairs holds every pair's score, in the set's order.
	Pairs []PairScore
	// Holes is the hole rule of the disparity measures (ScoreOptions.Holes).
	Holes Holes
	// HasDisparity and HasDepth report what was scored (see Scorable).
	HasDisparity, HasDepth bool
	// Disparity and Depth are the per-pair means over the pairs with
	// counted pixels; N is the total number of pixels counted.
	Disparity depth.DisparityMetrics
	Depth     depth.DepthMetrics
	// EmptyDisparity and EmptyDepth name the pairs with no counted pixel
	// for that measure, left out of its mean.
	EmptyDisparity, EmptyDepth []string
}

// Scorable reports what Score scores on set: disparity if every pair has
// truth/disp_left, metric depth if every pair has truth/depth_left and a
// rig (the set's rig.json or its own rigs/NAME.json, dataset.Set.HasRig).
func Scorable(set *dataset.Set) (disparity, metric bool) {
	if set == nil {
		return false, false
	}
	return set.Has(dataset.DispLeft), set.Has(dataset.DepthLeft) && set.HasRig()
}

// Score estimates every pair of set with the weights w (nil: the embedded
// default weights) through model.Estimator, with each pair's rig
// (model.Estimate.SetRig), and scores
// the left view against the ground truth (see the package documentation).
// It returns an error if set has no pair or nothing Scorable, if a file
// cannot be read (naming it), or if ctx ends.
func Score(ctx context.Context, w *model.Weights, set *dataset.Set, opt *ScoreOptions) (*Report, error) {
	o, err := resolve(set, opt)
	if err != nil {
		return nil, err
	}
	est, err := model.NewEstimator(w, &model.EstimatorOptions{Flip: o.Flip, MaxWorkers: o.Workers})
	if err != nil {
		return nil, fmt.Errorf("evaluation: %w", err)
	}
	return score(ctx, Network(est), set, &o)
}

func name(set *dataset.Set) string {
	if set.Dir != "" {
		return set.Dir
	}
	return set.Pairs[0].Left
}

// result is one pair's estimate and record.
type result struct {
	e   *model.Estimate
	r   *dataset.Record
	err error
}

// score runs est over set in chunks of o.Workers pairs and scores them in
// order; o is resolved.
func score(ctx context.Context, est Method, set *dataset.Set, o *ScoreOptions) (*Report, error) {
	rep := &Report{Holes: o.Holes}
	rep.HasDisparity, rep.HasDepth = Scorable(set)
	var dm depth.DisparityMean
	var zm depth.DepthMean
	n := len(set.Pairs)
	results := make([]result, o.Workers)
	for lo := 0; lo < n; lo += o.Workers {
		hi := min(lo+o.Workers, n)
		var wg sync.WaitGroup
		for i := lo; i < hi; i++ {
			wg.Add(1)
			go func() {
				defer wg.Done()
				res := &results[i-lo]
				*res = result{}
				if res.r, res.err = set.Read(i); res.err != nil {
					return
				}
				res.e, res.err = est.EstimatePair(ctx, res.r.Left, res.r.Right)
				if res.err == nil && rep.HasDepth && res.e.Depth == nil {
					res.err = res.e.SetRig(res.r.Rig)
				}
			}()
		}
		wg.Wait()
		for i := lo; i < hi; i++ {
			res, p := results[i-lo], set.Pairs[i]
			if res.err != nil {
				return nil, fmt.Errorf("evaluation: pair %s: %w", p.Name, res.err)
			}
			ps := PairScore{Name: p.Name}
			if rep.HasDisparity {
				d, err := o.Holes.apply(res.e.Disparity)
				if err != nil {
					return nil, fmt.Errorf("evaluation: pair %s: %w", p.Name, err)
				}
				m, empty, err := disparityScore(d, res.r.DispLeft)
				if err != nil {
					return nil, fmt.Errorf("evaluation: pair %s: %w", p.Name, err)
				}
				if empty {
					rep.EmptyDisparity = append(rep.EmptyDisparity, p.Name)
				}
				ps.Disparity = m
				dm.Add(m)
			}
			if rep.HasDepth {
				if res.e.Depth == nil {
					return nil, fmt.Errorf("evaluation: pair %s: the estimator gave no depth", p.Name)
				}
				zopt := depth.DepthOptions{MinDepth: res.r.Rig.MinDepth, MaxDepth: res.r.Rig.MaxDepth}
				m, err := depth.DepthErrors(res.e.Depth, res.r.DepthLeft, &zopt)
				switch {
				case errors.Is(err, depth.ErrNoValidPixels):
					nan := math.NaN()
					m = depth.DepthMetrics{Scale: 1, AbsRel: nan, SqRel: nan, RMSE: nan, RMSELog: nan, Delta1: nan, Delta2: nan, Delta3: nan}
					rep.EmptyDepth = append(rep.EmptyDepth, p.Name)
				case err != nil:
					return nil, fmt.Errorf("evaluation: pair %s: %w", p.Name, err)
				}
				ps.Depth = m
				zm.Add(m)
			}
			rep.Pairs = append(rep.Pairs, ps)
			if o.Inspect != nil {
				if err := o.Inspect(&ps, res.e, res.r); err != nil {
					return nil, err
				}
			}
			if o.Progress != nil {
				o.Progress(i+1, n)
			}
		}
	}
	rep.Disparity, rep.Depth = dm.Mean(), zm.Mean()
	return rep, nil
}
