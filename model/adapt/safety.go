package adapt

import (
	"fmt"
	"maps"
	"math"
	"slices"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
)

// check scores the candidate against the weights in service on the
// held-out frames and swaps it in or rolls it back (see the package doc).
// Called with a.stepping held.
func (a *Adapter) check() error {
	cand := a.candidate()
	if name, ok := nonFinite(cand); ok {
		return a.rollback(true, fmt.Sprintf("non-finite weight in %q", name))
	}
	drift := math.Sqrt(sqDist(cand, a.start)) / a.startNorm
	held := a.frames[len(a.frames)-a.opt.HoldOut:]
	candLoss, err := score(a.sess, held)
	if err != nil {
		return err
	}
	servLoss, err := a.scoreWeights(a.serving, held)
	if err != nil {
		return err
	}
	if err := a.sess.SetWeights(a.atTrainingSize(cand)); err != nil {
		return err
	}
	a.mu.Lock()
	a.status.Checks++
	a.status.CandidateLoss, a.status.ServingLoss, a.status.Drift = candLoss, servLoss, drift
	a.mu.Unlock()
	switch {
	case !finite(candLoss) || !finite(servLoss):
		return a.rollback(true, fmt.Sprintf("non-finite held-out loss (candidate %v, in service %v)", candLoss, servLoss))
	case a.opt.MaxDrift != DriftOff && drift > a.opt.MaxDrift:
		return a.rollback(false, fmt.Sprintf("refused: drift %.4g from the starting weights exceeds %.4g", drift, a.opt.MaxDrift))
	case candLoss > servLoss*(1+a.opt.Margin):
		return a.rollback(false, fmt.Sprintf("refused: held-out loss %.6g is worse than %.6g in service", candLoss, servLoss))
	}
	if err := a.est.SetWeights(cand); err != nil {
		return err
	}
	a.mu.Lock()
	a.serving = cand
	a.status.Swaps++
	a.mu.Unlock()
	return nil
}

// rollback puts the weights in service back into the training graph with
// a fresh solver, counts a refusal, and pauses if pause is set.
func (a *Adapter) rollback(pause bool, reason string) error {
	a.mu.Lock()
	serving := a.serving
	a.status.Rollbacks++
	a.status.Refused++
	a.status.Reason = reason
	if pause {
		a.status.Paused = true
	}
	a.mu.Unlock()
	a.since = 0
	if err := a.sess.SetWeights(a.atTrainingSize(serving)); err != nil {
		return err
	}
	a.sess.Solver = train.NewAdam(&train.AdamConfig{LearningRate: a.opt.LearningRate})
	return nil
}

// scoreWeights puts w into the training graph and returns its mean
// objective on frames; the caller puts the candidate back.
func (a *Adapter) scoreWeights(w *model.Weights, frames []*frame) (float64, error) {
	if err := a.sess.SetWeights(a.atTrainingSize(w)); err != nil {
		return 0, err
	}
	return score(a.sess, frames)
}

// score returns the mean objective of the session's weights on frames,
// without changing them.
func score(s *train.Session, frames []*frame) (float64, error) {
	var sum float64
	for _, f := range frames {
		t, err := s.Forward(f.left, f.right)
		s.ClearGradients()
		if err != nil {
			return 0, err
		}
		sum += t.Total
	}
	return sum / float64(len(frames)), nil
}

func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }

// nonFinite returns the first parameter, by name, holding NaN or Inf.
func nonFinite(w *model.Weights) (string, bool) {
	for _, name := range slices.Sorted(maps.Keys(w.Params)) {
		for _, v := range w.Params[name] {
			if !finite(float64(v)) {
				return name, true
			}
		}
	}
	return "", false
}

// sqDist returns Σ (a − b)² over all parameters, in name order; a nil b
// counts as zeros.
func sqDist(a, b *model.Weights) float64 {
	var s float64
	for _, name := range slices.Sorted(maps.Keys(a.Params)) {
		va := a.Params[name]
		var vb []float32
		if b != nil {
			vb = b.Params[name]
		}
		for i, v := range va {
			d := float64(v)
			if vb != nil {
				d -= float64(vb[i])
			}
			s += d * d
		}
	}
	return s
}

// copyWeights returns a deep copy of w.
func copyWeights(w *model.Weights) *model.Weights {
	c := &model.Weights{Config: w.Config, Params: make(map[string][]float32, len(w.Params)), Provenance: maps.Clone(w.Provenance)}
	c.Config.Encoder = slices.Clone(w.Config.Encoder)
	c.Config.Decoder = slices.Clone(w.Config.Decoder)
	for k, v := range w.Params {
		c.Params[k] = slices.Clone(v)
	}
	if c.Provenance == nil {
		c.Provenance = map[string]string{}
	}
	return c
}
