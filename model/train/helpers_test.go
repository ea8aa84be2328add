package train

import (
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"math"
	"math/rand/v2"
	"testing"

	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// probe is a test-only cost, Σ r ⊙ y with fixed random r, evaluated in
// float64 so that finite differences see no float32 rounding of the cost.
type probe struct {
	r     []float32
	value float64
	node  *G.Node
}

func newProbe(y *G.Node, rng *rand.Rand) (*probe, error) {
	s := y.Shape().Clone()
	p := &probe{r: uniform(rng, s.TotalSize(), -1, 1)}
	op := newKernelOp("probe", "probe", "", tensor.ScalarShape(), s)
	op.run = func(_ cpu.Procs, out []float32, in [][]float32) error {
		var sum float64
		for i, v := range in[0] {
			sum += float64(v) * float64(p.r[i])
		}
		p.value = sum
		out[0] = float32(sum)
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(in G.Nodes, output, grad *G.Node) (G.Nodes, error) {
		d := newKernelOp("probe.d", "probe", "", s, s, tensor.ScalarShape(), tensor.ScalarShape())
		d.run = func(_ cpu.Procs, out []float32, in [][]float32) error {
			for i, v := range p.r {
				out[i] = v * in[2][0]
			}
			return nil
		}
		n, err := apply(d, "probe.dy", in[0], output, grad)
		return G.Nodes{n}, err
	}
	n, err := apply(op, "probe", y)
	p.node = n
	return p, err
}

// harness is a graph over named float32 inputs with a probe cost, compiled
// for a TapeMachine with the gradients of every input.
type harness struct {
	g    *G.ExprGraph
	ins  []*G.Node
	vals [][]float32
	out  *G.Node
	cost *probe
	vm   G.VM
}

// newHarness draws inputs of the given shapes uniformly in [lo, hi), builds
// out = build(ins) and the probe cost.
func newHarness(t *testing.T, rng *rand.Rand, shapes []tensor.Shape, lo, hi float64, build func(ins []*G.Node) (*G.Node, error)) *harness {
	t.Helper()
	h := &harness{g: G.NewGraph()}
	for i, s := range shapes {
		v := uniform(rng, s.TotalSize(), lo, hi)
		h.vals = append(h.vals, v)
		n := G.NewTensor(h.g, tensor.Float32, len(s), G.WithShape(s...), G.WithName(string(rune('a'+i))),
			G.WithValue(tensor.New(tensor.WithShape(s...), tensor.WithBacking(v))))
		h.ins = append(h.ins, n)
	}
	var err error
	if h.out, err = build(h.ins); err != nil {
		t.Fatal(err)
	}
	if h.cost, err = newProbe(h.out, rng); err != nil {
		t.Fatal(err)
	}
	if _, err = G.Grad(h.cost.node, h.ins...); err != nil {
		t.Fatal(err)
	}
	h.vm = G.NewTapeMachine(h.g, G.BindDualValues(h.ins...))
	t.Cleanup(func() { h.vm.Close() })
	return h
}

// run runs the machine once and returns the cost.
func (h *harness) run(t *testing.T) float64 {
	t.Helper()
	if err := h.vm.RunAll(); err != nil {
		t.Fatal(err)
	}
	h.vm.Reset()
	return h.cost.value
}

// grads clears the gradients, runs once and returns a copy of the gradient of every input, then
// clears the gradients (gorgonia adds each run's gradient into them).
func (h *harness) grads(t *testing.T) [][]float32 {
	t.Helper()
	for _, n := range h.ins {
		if gv, err := n.Grad(); err == nil {
			clear(gv.Data().([]float32))
		}
	}
	h.run(t)
	var out [][]float32
	for _, n := range h.ins {
		gv, err := n.Grad()
		if err != nil {
			t.Fatalf("gradient of %s: %v", n.Name(), err)
		}
		d := gv.Data().([]float32)
		out = append(out, append([]float32(nil), d...))
		clear(d)
	}
	return out
}

// checkFD compares the gradients gorgonia computed with central finite
// differences of the cost (gonum diff/fd through loss.CheckGradient).
func (h *harness) checkFD(t *testing.T, step, abs, rel float64) {
	t.Helper()
	grads := h.grads(t)
	for i, n := range h.ins {
		x := h.vals[i]
		orig := append([]float32(nil), x...)
		f := func(p []float32) float64 {
			copy(x, p)
			return h.run(t)
		}
		res, err := checkGradient(f, orig, grads[i], step, abs, rel)
		copy(x, orig)
		if err != nil {
			t.Errorf("input %s: %v", n.Name(), err)
		} else {
			t.Logf("input %s: %d elements, max |analytic − numeric| %.3g", n.Name(), res.Checked, res.MaxAbsErr)
		}
	}
}

func uniform(rng *rand.Rand, n int, lo, hi float64) []float32 {
	out := make([]float32, n)
	for i := range out {
		out[i] = float32(lo + (hi-lo)*rng.Float64())
	}
	return out
}

// maxDiff returns the largest |a[i] − b[i]|.
func maxDiff(a, b []float32) float64 {
	if len(a) != len(b) {
		return math.Inf(1)
	}
	m := 0.0
	for i := range a {
		d := math.Abs(float64(a[i]) - float64(b[i]))
		if !(d <= m) {
			m = d
		}
	}
	return m
}

func checkGradient(f func([]float32) float64, x, grad []float32, step, abs, rel float64) (loss.GradCheckResult, error) {
	return loss.CheckGradient(f, x, grad, &loss.GradCheckOptions{Step: step, AbsTol: abs, RelTol: rel})
}
