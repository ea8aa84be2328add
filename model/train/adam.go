package train

import (
	"errors"
	"fmt"
	"math"
	"slices"

	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// AdamConfig holds the hyper-parameters of Adam. The zero value is valid.
type AdamConfig struct {
	// LearningRate is the step size η. If it is 0 it is defaulted to 1e-3.
	// Adam.SetLearningRate changes it between steps.
	LearningRate float64
	// Beta1 and Beta2 are the decay rates of the first and second moment
	// estimates. If 0 they are defaulted to 0.9 and 0.999.
	Beta1, Beta2 float64
	// Epsilon is added to the square root of the second moment. If 0 it is
	// defaulted to 1e-8.
	Epsilon float64
}

// AdamState is the state of an Adam solver, for checkpoints: the number of
// steps taken and, per parameter name, the first (M) and second (V)
// moment estimates, as float32 like the weights.
type AdamState struct {
	Step int                  `json:"step"`
	M    map[string][]float32 `json:"m"`
	V    map[string][]float32 `json:"v"`
}

// Adam is the Adam optimiser with bias correction (Kingma and Ba, 2015):
//
//	m ← β1·m + (1−β1)·g,  v ← β2·v + (1−β2)·g²
//	w ← w − η·m̂ / (√v̂ + ε),  m̂ = m/(1−β1^t),  v̂ = v/(1−β2^t)
//
// It implements gorgonia's Solver. Unlike gorgonia's AdamSolver its state
// is exported (State, SetState), its learning rate can change at every step
// (SetLearningRate), and it never skips a parameter silently. An Adam is
// not safe for concurrent use.
type Adam struct {
	cfg   AdamConfig
	state AdamState
}

// NewAdam returns an Adam solver with the given hyper-parameters; a nil
// config means the defaults.
func NewAdam(cfg *AdamConfig) *Adam {
	a := &Adam{state: AdamState{M: map[string][]float32{}, V: map[string][]float32{}}}
	if cfg != nil {
		a.cfg = *cfg
	}
	if a.cfg.LearningRate == 0 {
		a.cfg.LearningRate = 1e-3
	}
	if a.cfg.Beta1 == 0 {
		a.cfg.Beta1 = 0.9
	}
	if a.cfg.Beta2 == 0 {
		a.cfg.Beta2 = 0.999
	}
	if a.cfg.Epsilon == 0 {
		a.cfg.Epsilon = 1e-8
	}
	return a
}

// Config returns the hyper-parameters in use, defaults filled in.
func (a *Adam) Config() AdamConfig { return a.cfg }

// SetLearningRate sets η for the following steps, for warm-up and step
// schedules. It returns an error if lr is negative or not finite.
func (a *Adam) SetLearningRate(lr float64) error {
	if math.IsNaN(lr) || math.IsInf(lr, 0) || lr < 0 {
		return fmt.Errorf("train: adam: learning rate %v must be finite and not negative", lr)
	}
	a.cfg.LearningRate = lr
	return nil
}

// LearningRate returns η.
func (a *Adam) LearningRate() float64 { return a.cfg.LearningRate }

// ErrNonFiniteGradient is wrapped by the error Step returns when a
// gradient holds NaN or Inf; test for it with errors.Is.
var ErrNonFiniteGradient = errors.New("train: non-finite gradient")

// Step applies one Adam update to every parameter of model and then clears
// the gradients (gorgonia adds each run's gradient into them). Every
// parameter must be a float32 tensor node with a non-empty name (the key of
// its state) and a gradient of its shape.
//
// Step checks all of model before it changes anything: it returns an error
// if a parameter has no gradient, no name, a duplicate name or a gradient of
// the wrong shape; if a gradient holds NaN or Inf it returns an error
// wrapping ErrNonFiniteGradient, clears the gradients, and leaves the
// weights, the moments and the step count as they were, so the caller can
// skip the batch.
func (a *Adam) Step(model []G.ValueGrad) error {
	type param struct {
		name string
		w, g []float32
	}
	ps := make([]param, len(model))
	seen := make(map[string]bool, len(model))
	for i, vg := range model {
		nm, ok := vg.(G.Namer)
		if !ok || nm.Name() == "" {
			return fmt.Errorf("train: adam: parameter %d has no name", i)
		}
		name := nm.Name()
		if seen[name] {
			return fmt.Errorf("train: adam: parameter name %q appears twice", name)
		}
		seen[name] = true
		w, err := float32Data(vg.Value())
		if err != nil {
			return fmt.Errorf("train: adam: parameter %q: %w", name, err)
		}
		gv, err := vg.Grad()
		if err != nil || gv == nil {
			return fmt.Errorf("train: adam: parameter %q has no gradient (is it connected to the cost?): %v", name, err)
		}
		g, err := float32Data(gv)
		if err != nil {
			return fmt.Errorf("train: adam: gradient of %q: %w", name, err)
		}
		if len(g) != len(w) {
			return fmt.Errorf("train: adam: gradient of %q has %d values, the parameter %d", name, len(g), len(w))
		}
		if m, ok := a.state.M[name]; ok && len(m) != len(w) {
			return fmt.Errorf("train: adam: state of %q has %d values, the parameter %d", name, len(m), len(w))
		}
		ps[i] = param{name, w, g}
	}
	for _, p := range ps {
		for j, v := range p.g {
			if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
				for _, q := range ps {
					clear(q.g)
				}
				return fmt.Errorf("%w: %q holds %v at %d; no weight was changed", ErrNonFiniteGradient, p.name, v, j)
			}
		}
	}

	a.state.Step++
	t := float64(a.state.Step)
	b1, b2 := a.cfg.Beta1, a.cfg.Beta2
	c1 := 1 / (1 - math.Pow(b1, t))
	c2 := 1 / (1 - math.Pow(b2, t))
	lr, eps := a.cfg.LearningRate, a.cfg.Epsilon
	for _, p := range ps {
		m, v := a.state.M[p.name], a.state.V[p.name]
		if m == nil {
			m, v = make([]float32, len(p.w)), make([]float32, len(p.w))
			a.state.M[p.name], a.state.V[p.name] = m, v
		}
		for j, g32 := range p.g {
			g := float64(g32)
			mj := b1*float64(m[j]) + (1-b1)*g
			vj := b2*float64(v[j]) + (1-b2)*g*g
			m[j], v[j] = float32(mj), float32(vj)
			p.w[j] = float32(float64(p.w[j]) - lr*(mj*c1)/(math.Sqrt(vj*c2)+eps))
		}
		clear(p.g)
	}
	return nil
}

// State returns a deep copy of the solver's state.
func (a *Adam) State() AdamState {
	s := AdamState{Step: a.state.Step, M: make(map[string][]float32, len(a.state.M)), V: make(map[string][]float32, len(a.state.V))}
	for k, v := range a.state.M {
		s.M[k] = slices.Clone(v)
	}
	for k, v := range a.state.V {
		s.V[k] = slices.Clone(v)
	}
	return s
}

// SetState replaces the solver's state with a deep copy of s, as saved by
// State. It returns an error if the step count is negative, M and V do not
// name the same parameters with the same lengths, or a value is NaN, Inf,
// or (in V) negative. Lengths are checked against the parameters at the
// next Step.
func (a *Adam) SetState(s AdamState) error {
	if s.Step < 0 {
		return fmt.Errorf("train: adam: step count %d is negative", s.Step)
	}
	if len(s.M) != len(s.V) {
		return fmt.Errorf("train: adam: state has %d first moments and %d second moments", len(s.M), len(s.V))
	}
	for k, m := range s.M {
		v, ok := s.V[k]
		if !ok || len(v) != len(m) {
			return fmt.Errorf("train: adam: moments of %q disagree", k)
		}
		for j := range m {
			if !finite32(m[j]) || !finite32(v[j]) || v[j] < 0 {
				return fmt.Errorf("train: adam: moments of %q hold an invalid value at %d (m %v, v %v)", k, j, m[j], v[j])
			}
		}
	}
	if s.Step == 0 && len(s.M) > 0 {
		return errors.New("train: adam: state has moments but no steps")
	}
	a.state = AdamState{Step: s.Step, M: map[string][]float32{}, V: map[string][]float32{}}
	for k := range s.M {
		a.state.M[k] = slices.Clone(s.M[k])
		a.state.V[k] = slices.Clone(s.V[k])
	}
	return nil
}

func finite32(v float32) bool { return !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) }

// float32Data returns the backing values of a contiguous float32 tensor.
func float32Data(v G.Value) ([]float32, error) {
	d, ok := v.(*tensor.Dense)
	if !ok || d == nil {
		return nil, fmt.Errorf("value is a %T, want a float32 tensor", v)
	}
	if d.RequiresIterator() {
		return nil, errors.New("tensor is not contiguous")
	}
	if d.Dtype() != tensor.Float32 {
		return nil, fmt.Errorf("tensor holds %v, want float32", d.Dtype())
	}
	return d.Float32s(), nil
}
