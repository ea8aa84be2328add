package model

import (
	"errors"
	"reflect"
)

// SetWeights replaces the weights a running Estimator runs with w, which
// must have the same Config as the weights in service (same kind, layer
// widths, input size and d_max). The swap is atomic: every call of
// Estimate or EstimatePair loads the weights once, when it takes a worker,
// and runs them alone to its end; a worker's network built from older
// weights is pointed at the new parameters on its next use, which
// allocates nothing (an adapting robot swaps often). So each concurrent call sees the old
// or the new weights, never a mix. SetWeights keeps references to w's
// parameter slices: the caller must not change them afterwards. It
// returns an error for nil or invalid weights or another Config.
func (e *Estimator) SetWeights(w *Weights) error {
	if w == nil {
		return errors.New("model: new weights are nil")
	}
	a, err := w.Arch()
	if err != nil {
		return err
	}
	if err := w.check(a); err != nil {
		return err
	}
	if !reflect.DeepEqual(a.Config, e.arch.Config) {
		return errors.New("model: new weights have another configuration than the weights in service")
	}
	e.weights.Store(w)
	return nil
}
