package main

import (
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/synth"
)

// objective scores weights with the adapter's self-supervised objective
// (train.Session with the default objective, batch 1) on a pair resized
// to the size the adapter trains at: the Estimator's network size for the
// drive's frames.
type objective struct {
	config      model.Config // the weights' config at the network size
	sess        *train.Session
	rs          *planar.Resampler
	left, right *planar.Image
}

func newObjective(e *model.Estimator, width, height int) (*objective, error) {
	nw, nh, err := e.NetworkSize(width, height)
	if err != nil {
		return nil, err
	}
	w := e.Weights()
	c := w.Config
	c.Width, c.Height = nw, nh
	sess, err := train.NewSession(&model.Weights{Config: c, Params: w.Params}, 1, nil, nil)
	if err != nil {
		return nil, err
	}
	rs, err := planar.NewResampler(nw, nh)
	if err != nil {
		sess.Close()
		return nil, err
	}
	return &objective{config: c, sess: sess, rs: rs, left: planar.New(1, 3, nh, nw), right: planar.New(1, 3, nh, nw)}, nil
}

// SetPair resizes the pair that Score scores on, as the adapter resizes
// the 8-bit views it is offered.
func (o *objective) SetPair(p *synth.Pair) error {
	if err := o.rs.Scale(o.left, p.Left.ToNRGBA(0)); err != nil {
		return err
	}
	return o.rs.Scale(o.right, p.Right.ToNRGBA(0))
}

// Score returns the objective's total for the weights w (of the
// Estimator's architecture) on the last pair set.
func (o *objective) Score(w *model.Weights) (float64, error) {
	if err := o.sess.SetWeights(&model.Weights{Config: o.config, Params: w.Params}); err != nil {
		return 0, err
	}
	t, err := o.sess.Forward(o.left, o.right)
	if err != nil {
		return 0, err
	}
	o.sess.ClearGradients() // Forward left the gradients, which no step uses
	return t.Total, nil
}

// Close releases the training graph.
func (o *objective) Close() error { return o.sess.Close() }
