package adapt

import (
	"fmt"
	"maps"
	"math"
	"slices"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
)

// check scores the candidate on the held-out frames against the weights
// in service and the starting weights, and swaps it in, rolls it back, or
// falls back to the starting weights (see the package doc). Called with
// a.stepping held.
func (a *Adapter) check() error {
	cand := a.candidate()
	if name, ok := nonFinite(cand); ok {
		return a.rollback(true, fmt.Sprintf("non-finite weight in %q", name))
	}
	drift := math.Sqrt(sqDist(cand, a.start)) / a.startNorm
	held := a.frames[len(a.frames)-a.opt.HoldOut:]
	candLoss, err := a.score(held)
	if err != nil {
		return err
	}
	servLoss, err := a.cachedLoss(held, false)
	if err != nil {
		return err
	}
	startLoss, err := a.cachedLoss(held, true)
	if err != nil {
		return err
	}
	a.mu.Lock()
	a.status.Checks++
	a.status.CandidateLoss, a.status.ServingLoss, a.status.StartLoss, a.status.Drift = candLoss, servLoss, startLoss, drift
	a.mu.Unlock()
	bound, gain := 1+a.opt.Margin, 1-max(0, a.opt.MinGain) // GainOff: no gain
	var refusal string
	switch {
	case !finite(candLoss) || !finite(servLoss) || !finite(startLoss):
		return a.rollback(true, fmt.Sprintf("non-finite held-out loss (candidate %v, in service %v, starting weights %v)", candLoss, servLoss, startLoss))
	case a.opt.MaxDrift != DriftOff && drift > a.opt.MaxDrift:
		refusal = fmt.Sprintf("refused: drift %.4g from the starting weights exceeds %.4g", drift, a.opt.MaxDrift)
	case candLoss > servLoss*bound:
		refusal = fmt.Sprintf("refused: held-out loss %.6g is worse than %.6g in service", candLoss, servLoss)
	case candLoss > startLoss*gain:
		refusal = fmt.Sprintf("refused: held-out loss %.6g is not %.3g %% below %.6g of the starting weights", candLoss, 100*(1-gain), startLoss)
	}
	if refusal != "" {
		if a.adapted && servLoss > startLoss*gain {
			return a.fallBack(fmt.Sprintf("%s; the weights in service score %.6g, not %.3g %% below %.6g of the starting weights: back to those", refusal, servLoss, 100*(1-gain), startLoss))
		}
		return a.rollback(false, refusal)
	}
	if err := a.sess.SetWeights(a.atTrainingSize(cand)); err != nil {
		return err
	}
	return a.serve(cand, false)
}

// serve makes w the weights in service, in the Estimator and for the
// loss cache; fallback counts it as a fall-back to the starting weights.
func (a *Adapter) serve(w *model.Weights, fallback bool) error {
	if err := a.est.SetWeights(w); err != nil {
		return err
	}
	a.servingID++
	a.adapted = !fallback
	a.mu.Lock()
	a.serving = w
	if fallback {
		a.status.Fallbacks++
	} else {
		a.status.Swaps++
	}
	a.mu.Unlock()
	return nil
}

// fallBack puts the starting weights back in service and rolls the
// training graph back to them.
func (a *Adapter) fallBack(reason string) error {
	if err := a.serve(a.start, true); err != nil {
		return err
	}
	return a.rollback(false, reason)
}

// cachedLoss returns the mean objective on frames of the starting weights
// (start) or of the weights in service, scoring in the training graph only
// the frames not scored before (a frame's starting loss never changes; its
// loss in service until the next swap). It leaves other weights in the
// graph: the caller restores or rolls back.
func (a *Adapter) cachedLoss(frames []*frame, start bool) (float64, error) {
	w := a.serving
	if start {
		w = a.start
	}
	loaded := false
	var sum float64
	for _, f := range frames {
		v, ok := f.startLoss, f.startScored
		if !start {
			v, ok = f.servingLoss, f.servingID == a.servingID
		}
		if !ok {
			if !loaded {
				if err := a.sess.SetWeights(a.atTrainingSize(w)); err != nil {
					return 0, err
				}
				loaded = true
			}
			l, r := a.load(f)
			t, err := a.sess.Forward(l, r)
			a.sess.ClearGradients()
			if err != nil {
				return 0, err
			}
			if v = t.Total; start {
				f.startLoss, f.startScored = v, true
			} else {
				f.servingLoss, f.servingID = v, a.servingID
			}
		}
		sum += v
	}
	return sum / float64(len(frames)), nil
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

// score returns the mean objective of the training graph's weights on
// frames, without changing them.
func (a *Adapter) score(frames []*frame) (float64, error) {
	var sum float64
	for _, f := range frames {
		l, r := a.load(f)
		t, err := a.sess.Forward(l, r)
		a.sess.ClearGradients()
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
