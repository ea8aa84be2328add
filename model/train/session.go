package train

import (
	"errors"
	"fmt"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
)

// Session is one training set-up: the network graph, the objective over
// its four disparity outputs, the gradients of every parameter, a
// TapeMachine and an Adam solver. A Session is not safe for concurrent
// use.
type Session struct {
	// net is the network graph; obj is the loss node, whose Terms and
	// PerScale hold the last run's losses.
	net *network
	obj *graphObjective
	// Solver updates the parameters; set its learning rate before a step,
	// save and restore its state with State and SetState.
	Solver *Adam

	vm  G.VM
	vgs []G.ValueGrad
}

// NewSession builds a Session for batches of batch image pairs, starting
// from the weights w (copied into the graph). A nil opts means
// loss.DefaultObjectiveOptions and a nil adam the Adam defaults. It
// returns an error if w is invalid or the graph cannot be built.
func NewSession(w *model.Weights, batch int, opts *loss.ObjectiveOptions, adam *AdamConfig) (*Session, error) {
	if w == nil {
		return nil, errors.New("train: weights are nil")
	}
	a, err := w.Arch()
	if err != nil {
		return nil, fmt.Errorf("train: %w", err)
	}
	g := G.NewGraph()
	net, err := buildNetwork(g, a, batch)
	if err != nil {
		return nil, err
	}
	if err := net.SetWeights(w); err != nil {
		return nil, err
	}
	obj, err := newGraphObjective("objective", net.Outputs[:], opts)
	if err != nil {
		return nil, err
	}
	if _, err := G.Grad(obj.Cost(), net.Params...); err != nil {
		return nil, fmt.Errorf("train: gradients: %w", err)
	}
	s := &Session{net: net, obj: obj, Solver: NewAdam(adam)}
	s.vm = G.NewTapeMachine(g, G.BindDualValues(net.Params...))
	s.vgs = G.NodesToValueGrads(net.Params)
	return s, nil
}

// Forward runs the graph once on a batch (left, right: (batch, 3, H, W),
// RGB in [0, 1]; the network sees the left image) and leaves the gradients
// in the parameters, without a solver step. It returns the weighted terms
// of the objective.
func (s *Session) Forward(left, right *planar.Image) (loss.Terms, error) {
	if s.net.Arch.IsStereo() {
		if err := s.net.SetPair(left, right); err != nil {
			return loss.Terms{}, err
		}
	} else if err := s.net.SetInput(left); err != nil {
		return loss.Terms{}, err
	}
	if err := s.obj.SetImages(left, right); err != nil {
		return loss.Terms{}, err
	}
	defer s.vm.Reset()
	if err := s.vm.RunAll(); err != nil {
		s.ClearGradients() // a partial backward pass may have added some
		return loss.Terms{}, fmt.Errorf("train: run: %w", err)
	}
	return s.obj.Terms(), nil
}

// Step runs one training step on a batch: forward, backward and an Adam
// update at the solver's current learning rate. It returns the weighted
// terms of the objective before the update. A non-finite gradient returns
// the terms with an error wrapping ErrNonFiniteGradient and leaves the
// weights and the solver state untouched, so the caller may skip the batch.
func (s *Session) Step(left, right *planar.Image) (loss.Terms, error) {
	t, err := s.Forward(left, right)
	if err != nil {
		return t, err
	}
	return t, s.Solver.Step(s.vgs)
}

// Weights returns a copy of the current parameters as model weights with
// the network's configuration.
func (s *Session) Weights() *model.Weights {
	w := &model.Weights{Config: s.net.Arch.Config, Provenance: map[string]string{}}
	s.net.CopyWeights(w)
	return w
}

// Close releases the TapeMachine.
func (s *Session) Close() error { return s.vm.Close() }

// ClearGradients zeroes the parameters' gradients, which gorgonia adds
// into on every run (Step clears them itself; call this after Forward when
// the gradients are not wanted).
func (s *Session) ClearGradients() {
	for _, n := range s.net.Params {
		if g, err := n.Grad(); err == nil {
			if d, err := float32Data(g); err == nil {
				clear(d)
			}
		}
	}
}
