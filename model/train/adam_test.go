package train

import (
	"encoding/json"
	"errors"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// param is a named weight tensor with a gradient, a gorgonia ValueGrad
// without a graph.
type param struct {
	name string
	w, g *tensor.Dense
	err  error
}

func newParam(name string, w []float32) *param {
	return &param{name: name,
		w: tensor.New(tensor.WithShape(len(w)), tensor.WithBacking(slices.Clone(w))),
		g: tensor.New(tensor.WithShape(len(w)), tensor.WithBacking(make([]float32, len(w))))}
}

func (p *param) Name() string       { return p.name }
func (p *param) Value() G.Value     { return p.w }
func (p *param) weights() []float32 { return p.w.Data().([]float32) }
func (p *param) grad() []float32    { return p.g.Data().([]float32) }
func (p *param) Grad() (G.Value, error) {
	if p.err != nil {
		return nil, p.err
	}
	return p.g, nil
}

func valueGrads(ps ...*param) []G.ValueGrad {
	out := make([]G.ValueGrad, len(ps))
	for i, p := range ps {
		out[i] = p
	}
	return out
}

// firstFar returns the first index where got and want differ by more than
// rel times the largest |want| (moments mix values of several magnitudes
// and signs, so float32 rounding scales with the largest), or −1; a length
// mismatch is index 0.
func firstFar(got []float32, want []float64, rel float64) int {
	if len(got) != len(want) {
		return 0
	}
	scale := 0.0
	for _, w := range want {
		scale = math.Max(scale, math.Abs(w))
	}
	for i := range got {
		if math.Abs(float64(got[i])-want[i]) > rel*scale {
			return i
		}
	}
	return -1
}

func to32(v []float64) []float32 {
	out := make([]float32, len(v))
	for i, x := range v {
		out[i] = float32(x)
	}
	return out
}

// Outside reference: torch.optim.Adam of Debian's python3-torch 1.13.1
// (testdata/train/adam_torch.json, made by gen_adam.py) on a fixed
// sequence of gradients, with the learning rate changed before every step.
func TestAdamAgainstTorch(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "train", "adam_torch.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		Source string
		Cases  []struct {
			Name              string
			Beta1, Beta2, Eps float64
			LR                []float64
			Init              map[string][]float64
			Grads, Weights    []map[string][]float64
			State             map[string]struct {
				M, V []float64
				Step int
			}
		}
	}
	if err := json.Unmarshal(b, &fx); err != nil {
		t.Fatal(err)
	}
	if len(fx.Cases) == 0 {
		t.Fatal("no cases")
	}
	for _, c := range fx.Cases {
		t.Run(c.Name, func(t *testing.T) {
			names := []string{"layer.weight", "layer.bias"}
			var ps []*param
			for _, n := range names {
				ps = append(ps, newParam(n, to32(c.Init[n])))
			}
			a := NewAdam(&AdamConfig{Beta1: c.Beta1, Beta2: c.Beta2, Epsilon: c.Eps})
			for step, lr := range c.LR {
				if err := a.SetLearningRate(lr); err != nil {
					t.Fatal(err)
				}
				for _, p := range ps {
					copy(p.grad(), to32(c.Grads[step][p.name]))
				}
				if err := a.Step(valueGrads(ps...)); err != nil {
					t.Fatal(err)
				}
				for _, p := range ps {
					want := c.Weights[step][p.name]
					for i, v := range p.weights() {
						if d := math.Abs(float64(v) - want[i]); d > 1e-6+1e-5*math.Abs(want[i]) {
							t.Fatalf("step %d %s[%d] = %v, torch %v", step+1, p.name, i, v, want[i])
						}
					}
					if slices.ContainsFunc(p.grad(), func(v float32) bool { return v != 0 }) {
						t.Fatalf("step %d: gradient of %s not cleared", step+1, p.name)
					}
				}
			}
			st := a.State()
			for _, n := range names {
				ref := c.State[n]
				if st.Step != ref.Step {
					t.Errorf("step count %d, torch %d", st.Step, ref.Step)
				}
				// float32 rounding of values up to 10 (m) and 100 (v).
				if i := firstFar(st.M[n], ref.M, 1e-6); i >= 0 {
					t.Errorf("%s: first moment[%d] %v, torch's exp_avg %v", n, i, st.M[n][i], ref.M[i])
				}
				if i := firstFar(st.V[n], ref.V, 1e-6); i >= 0 {
					t.Errorf("%s: second moment[%d] %v, torch's exp_avg_sq %v", n, i, st.V[n][i], ref.V[i])
				}
			}
		})
	}
}

// Outside reference: gorgonia v0.9.18's own AdamSolver, same
// hyper-parameters, no clipping or regularisation, over 20 steps on the
// quadratic Σ c_i (w_i − t_i)², each solver following its own trajectory.
func TestAdamAgainstGorgonia(t *testing.T) {
	const n = 12
	c := make([]float32, n)
	target := make([]float32, n)
	w0 := make([]float32, n)
	for i := range n {
		c[i] = float32(0.1 + float64(i%4))
		target[i] = float32(math.Sin(float64(i)))
		w0[i] = float32(math.Cos(1.7 * float64(i)))
	}
	gradient := func(p *param) {
		g, w := p.grad(), p.weights()
		for i := range g {
			g[i] = 2 * c[i] * (w[i] - target[i])
		}
	}
	for _, hp := range []struct{ lr, b1, b2, eps float64 }{{1e-3, 0.9, 0.999, 1e-8}, {0.05, 0.8, 0.99, 1e-6}} {
		ours, theirs := newParam("w", w0), newParam("w", w0)
		a := NewAdam(&AdamConfig{LearningRate: hp.lr, Beta1: hp.b1, Beta2: hp.b2, Epsilon: hp.eps})
		g := G.NewAdamSolver(G.WithLearnRate(hp.lr), G.WithBeta1(hp.b1), G.WithBeta2(hp.b2), G.WithEps(hp.eps))
		for step := 1; step <= 20; step++ {
			gradient(ours)
			gradient(theirs)
			if err := a.Step(valueGrads(ours)); err != nil {
				t.Fatal(err)
			}
			if err := g.Step(valueGrads(theirs)); err != nil {
				t.Fatal(err)
			}
			if d := maxDiff(ours.weights(), theirs.weights()); d > 1e-6 {
				t.Fatalf("lr %v: step %d: weights differ from gorgonia's AdamSolver by %g", hp.lr, step, d)
			}
		}
		if d := maxDiff(ours.weights(), w0); d < 10*hp.lr {
			t.Errorf("lr %v: the weights hardly moved (%g)", hp.lr, d)
		}
	}
}

// A non-finite gradient anywhere stops the step before any weight or state
// changes; the gradients are cleared.
func TestAdamNonFiniteGradient(t *testing.T) {
	for _, bad := range []float32{float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1))} {
		p1, p2 := newParam("a", []float32{1, 2, 3}), newParam("b", []float32{4, 5})
		a := NewAdam(nil)
		copy(p1.grad(), []float32{0.1, 0.2, 0.3})
		copy(p2.grad(), []float32{0.4, 0.5})
		if err := a.Step(valueGrads(p1, p2)); err != nil {
			t.Fatal(err)
		}
		before := a.State()
		w1, w2 := slices.Clone(p1.weights()), slices.Clone(p2.weights())
		copy(p1.grad(), []float32{0.1, 0.2, 0.3})
		copy(p2.grad(), []float32{0.4, bad})
		err := a.Step(valueGrads(p1, p2))
		if !errors.Is(err, ErrNonFiniteGradient) {
			t.Fatalf("gradient %v: error %v, want ErrNonFiniteGradient", bad, err)
		}
		if !slices.Equal(p1.weights(), w1) || !slices.Equal(p2.weights(), w2) {
			t.Errorf("gradient %v: weights changed", bad)
		}
		after := a.State()
		if after.Step != before.Step || !slices.Equal(after.M["a"], before.M["a"]) || !slices.Equal(after.V["b"], before.V["b"]) {
			t.Errorf("gradient %v: state changed", bad)
		}
		if slices.ContainsFunc(append(p1.grad(), p2.grad()...), func(v float32) bool { return v != 0 }) {
			t.Errorf("gradient %v: gradients not cleared", bad)
		}
	}
}

// A parameter without a gradient is an error, not a silent skip, and
// nothing changes.
func TestAdamMissingGradient(t *testing.T) {
	p1, p2 := newParam("a", []float32{1, 2}), newParam("b", []float32{3})
	copy(p1.grad(), []float32{1, 1})
	p2.err = errors.New("no gradient")
	a := NewAdam(nil)
	if err := a.Step(valueGrads(p1, p2)); err == nil {
		t.Fatal("a missing gradient was accepted")
	}
	if !slices.Equal(p1.weights(), []float32{1, 2}) || a.State().Step != 0 {
		t.Error("the failed step changed something")
	}

	// A real graph: a parameter without a dual value (not bound) has no
	// gradient in gorgonia; gorgonia's AdamSolver returns an error too, but
	// Step must name the parameter.
	g := G.NewGraph()
	x := G.NewVector(g, tensor.Float32, G.WithShape(2), G.WithName("x"), G.WithValue(tensor.New(tensor.WithBacking([]float32{1, 2}))))
	if err := a.Step(G.NodesToValueGrads(G.Nodes{x})); err == nil {
		t.Error("a node without a gradient was accepted")
	}

	// Duplicate and empty names.
	if err := a.Step(valueGrads(p1, newParam("a", []float32{0, 0}))); err == nil {
		t.Error("duplicate names accepted")
	}
	if err := a.Step(valueGrads(newParam("", []float32{0}))); err == nil {
		t.Error("an empty name accepted")
	}
}

// Saving the state (through JSON, as a checkpoint would) and restoring it
// into a new solver continues bit for bit like an uninterrupted run.
func TestAdamStateRoundTrip(t *testing.T) {
	grads := func(step int, p *param) {
		for i := range p.grad() {
			p.grad()[i] = float32(math.Sin(float64(3*step + i)))
		}
	}
	run := func(a *Adam, p *param, from, to int) {
		for s := from; s < to; s++ {
			grads(s, p)
			if err := a.SetLearningRate(1e-3 * float64(s+1)); err != nil {
				t.Fatal(err)
			}
			if err := a.Step(valueGrads(p)); err != nil {
				t.Fatal(err)
			}
		}
	}
	full := newParam("w", []float32{0.5, -0.25, 1, 2})
	run(NewAdam(nil), full, 0, 6)

	part := newParam("w", []float32{0.5, -0.25, 1, 2})
	a := NewAdam(nil)
	run(a, part, 0, 3)
	b, err := json.Marshal(a.State())
	if err != nil {
		t.Fatal(err)
	}
	var st AdamState
	if err := json.Unmarshal(b, &st); err != nil {
		t.Fatal(err)
	}
	resumed := NewAdam(nil)
	if err := resumed.SetState(st); err != nil {
		t.Fatal(err)
	}
	if resumed.State().Step != 3 {
		t.Errorf("restored step count %d, want 3", resumed.State().Step)
	}
	run(resumed, part, 3, 6)
	if !slices.Equal(full.weights(), part.weights()) {
		t.Errorf("resumed run %v, uninterrupted %v", part.weights(), full.weights())
	}

	// A fresh solver (step 0) would take a different path: the state matters.
	other := newParam("w", slices.Clone(part.weights()))
	copy(other.weights(), []float32{0.5, -0.25, 1, 2})
	fresh := NewAdam(nil)
	run(fresh, other, 0, 3)
	run(NewAdam(nil), other, 3, 6)
	if slices.Equal(full.weights(), other.weights()) {
		t.Error("restarting the solver gave the same weights; the state test proves nothing")
	}

	bad := []AdamState{
		{Step: -1},
		{Step: 1, M: map[string][]float32{"w": {1}}, V: map[string][]float32{}},
		{Step: 1, M: map[string][]float32{"w": {1}}, V: map[string][]float32{"w": {-1}}},
		{Step: 1, M: map[string][]float32{"w": {float32(math.NaN())}}, V: map[string][]float32{"w": {1}}},
		{Step: 0, M: map[string][]float32{"w": {1}}, V: map[string][]float32{"w": {1}}},
	}
	for i, s := range bad {
		if err := NewAdam(nil).SetState(s); err == nil {
			t.Errorf("bad state %d accepted", i)
		}
	}
	// State of the wrong length is caught at the next step.
	short := NewAdam(nil)
	if err := short.SetState(AdamState{Step: 1, M: map[string][]float32{"w": {0}}, V: map[string][]float32{"w": {0}}}); err != nil {
		t.Fatal(err)
	}
	if err := short.Step(valueGrads(newParam("w", []float32{1, 2}))); err == nil {
		t.Error("moments of the wrong length accepted")
	}
	if err := short.SetLearningRate(math.NaN()); err == nil {
		t.Error("NaN learning rate accepted")
	}
}
