package train

import (
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"github.com/parallaxdepth/parallax/warp"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// The correlation and feature-warp operators only wrap kernels: their
// forward value must be the kernel's, bit for bit, and the gradients
// gorgonia's TapeMachine computes through their SymDiff must match central
// finite differences (gonum diff/fd through loss.CheckGradient) of a random
// linear probe of the output. The kernels themselves are checked against
// PyTorch 1.13.1 (testdata/stereo/ops for the correlation, testdata/warp for
// the warp).
func TestStereoOperatorGradients(t *testing.T) {
	cases := []struct {
		name   string
		shapes []tensor.Shape
		prep   func(in [][]float32) // moves inputs off the kinks of a piecewise-linear op
		build  func([]*G.Node) (*G.Node, error)
		want   func(in [][]float32) []float32
	}{
		{
			name:   "correlation",
			shapes: []tensor.Shape{{2, 3, 4, 9}, {2, 3, 4, 9}},
			build:  func(in []*G.Node) (*G.Node, error) { return nodeCorrelation("corr", in[0], in[1], 5) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 2*5*4*9)
				cpu.Correlation(y, in[0], in[1], 2, 3, 4, 9, 5)
				return y
			},
		},
		{
			name:   "correlation, more shifts than columns",
			shapes: []tensor.Shape{{1, 2, 2, 4}, {1, 2, 2, 4}},
			build:  func(in []*G.Node) (*G.Node, error) { return nodeCorrelation("corr", in[0], in[1], 6) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 6*2*4)
				cpu.Correlation(y, in[0], in[1], 1, 2, 2, 4, 6)
				return y
			},
		},
		{
			// A feature map against itself: gorgonia adds the two gradients.
			name:   "self-correlation",
			shapes: []tensor.Shape{{1, 4, 3, 7}},
			build:  func(in []*G.Node) (*G.Node, error) { return nodeCorrelation("corr", in[0], in[0], 3) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 3*3*7)
				cpu.Correlation(y, in[0], in[0], 1, 4, 3, 7, 3)
				return y
			},
		},
		{
			name:   "warp rebuilding the left view",
			shapes: []tensor.Shape{{2, 3, 3, 8}, {2, 1, 3, 8}},
			prep:   offKinks(8),
			build:  func(in []*G.Node) (*G.Node, error) { return nodeWarpFeatures("wl", in[0], in[1], warp.RebuildLeft) },
			want:   warpWant(warp.Shape{N: 2, C: 3, H: 3, W: 8}, warp.RebuildLeft),
		},
		{
			name:   "warp rebuilding the right view",
			shapes: []tensor.Shape{{1, 2, 2, 9}, {1, 1, 2, 9}},
			prep:   offKinks(9),
			build:  func(in []*G.Node) (*G.Node, error) { return nodeWarpFeatures("wr", in[0], in[1], warp.RebuildRight) },
			want:   warpWant(warp.Shape{N: 1, C: 2, H: 2, W: 9}, warp.RebuildRight),
		},
		{
			// The coarse-to-fine step: right features warped by the left
			// disparity, then correlated with the left features; the
			// disparity gets its gradient through both ops.
			name:   "warp then correlation",
			shapes: []tensor.Shape{{1, 3, 2, 10}, {1, 3, 2, 10}, {1, 1, 2, 10}},
			prep: func(in [][]float32) {
				offKinks(10)(in[1:])
			},
			build: func(in []*G.Node) (*G.Node, error) {
				wr, err := nodeWarpFeatures("w", in[1], in[2], warp.RebuildLeft)
				if err != nil {
					return nil, err
				}
				return nodeCorrelation("corr", in[0], wr, 4)
			},
			want: func(in [][]float32) []float32 {
				s := warp.Shape{N: 1, C: 3, H: 2, W: 10}
				wr := make([]float32, 3*2*10)
				warp.Forward(wr, nil, in[1], in[2], s, warp.RebuildLeft, warp.Zero)
				y := make([]float32, 4*2*10)
				cpu.Correlation(y, in[0], wr, 1, 3, 2, 10, 4)
				return y
			},
		},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(uint64(i)+101, 7))
			h := newHarness(t, rng, c.shapes, -1, 1, c.build)
			if c.prep != nil {
				c.prep(h.vals)
			}
			h.run(t)
			got := h.out.Value().Data().([]float32)
			if d := maxDiff(got, c.want(h.vals)); d != 0 {
				t.Errorf("forward differs from the kernels by %g", d)
			}
			h.checkFD(t, 1.0/1024, 2e-3, 2e-3)
		})
	}
}

// offKinks returns a prep that sets the last input, a disparity over a row
// of w pixels, to fractions of the width whose shift d·w lies in [0.2, 0.8]
// modulo 1 and in [−1.5, w+0.5] pixels: bilinear sampling has kinks at whole
// pixels, where a central difference of step 2⁻¹⁰ would straddle two
// slopes. The shifts cover samples half and wholly outside the row.
func offKinks(w int) func(in [][]float32) {
	return func(in [][]float32) {
		d := in[len(in)-1]
		rng := rand.New(rand.NewPCG(uint64(len(d)), uint64(w)))
		for i := range d {
			px := float64(rng.IntN(w+2)-2) + 0.2 + 0.6*rng.Float64()
			d[i] = float32(px / float64(w))
		}
	}
}

func warpWant(s warp.Shape, dir warp.Direction) func(in [][]float32) []float32 {
	return func(in [][]float32) []float32 {
		y := make([]float32, s.N*s.C*s.H*s.W)
		warp.Forward(y, nil, in[0], in[1], s, dir, warp.Zero)
		return y
	}
}

// The gradient nodes carry the documented names and are built for both
// inputs.
func TestStereoOperatorGradientNames(t *testing.T) {
	g := G.NewGraph()
	l := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 4), G.WithName("l"))
	r := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 4), G.WithName("r"))
	d := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 1, 3, 4), G.WithName("d"))
	wr, err := nodeWarpFeatures("w", r, d, warp.RebuildLeft)
	if err != nil {
		t.Fatal(err)
	}
	y, err := nodeCorrelation("c", l, wr, 2)
	if err != nil {
		t.Fatal(err)
	}
	p, err := newProbe(y, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := G.Grad(p.node, l, r, d); err != nil {
		t.Fatal(err)
	}
	names := map[string]bool{}
	for _, n := range g.AllNodes() {
		names[n.Name()] = true
	}
	for _, want := range []string{"c.dleft", "c.dright", "w.dsrc", "w.ddisp"} {
		if !names[want] {
			t.Errorf("graph has no node %q", want)
		}
	}
}

func TestStereoOperatorErrors(t *testing.T) {
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 4), G.WithName("x"))
	wide := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 5), G.WithName("wide"))
	d := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 1, 3, 4), G.WithName("d"))
	d2 := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 4), G.WithName("d2"))
	vec := G.NewVector(g, tensor.Float32, G.WithShape(4), G.WithName("vec"))
	for _, c := range []struct {
		what string
		err  error
	}{
		{"correlation of two shapes", second(nodeCorrelation("c1", x, wide, 2))},
		{"correlation with 0 shifts", second(nodeCorrelation("c2", x, x, 0))},
		{"correlation of a vector", second(nodeCorrelation("c3", vec, vec, 1))},
		{"correlation of nil", second(nodeCorrelation("c4", x, nil, 1))},
		{"warp by a 2-channel disparity", second(nodeWarpFeatures("w1", x, d2, warp.RebuildLeft))},
		{"warp by a disparity of another width", second(nodeWarpFeatures("w2", wide, d, warp.RebuildLeft))},
		{"warp in an undefined direction", second(nodeWarpFeatures("w3", x, d, warp.Direction(0)))},
	} {
		if c.err == nil {
			t.Errorf("%s: no error", c.what)
		} else {
			t.Logf("%s: %v", c.what, c.err)
		}
	}
}

func second(_ *G.Node, err error) error { return err }

// Hashes cover the settings: layers that differ only in disps or in
// direction stay distinct nodes.
func TestStereoOperatorHashes(t *testing.T) {
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 8), G.WithName("x"))
	d := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 1, 3, 8), G.WithName("d"))
	c1, _ := nodeCorrelation("c", x, x, 2)
	c2, _ := nodeCorrelation("c", x, x, 3)
	if c1.Op().Hashcode() == c2.Op().Hashcode() {
		t.Error("correlations over 2 and 3 shifts share a hash")
	}
	w1, _ := nodeWarpFeatures("w", x, d, warp.RebuildLeft)
	w2, _ := nodeWarpFeatures("w", x, d, warp.RebuildRight)
	if w1.Op().Hashcode() == w2.Op().Hashcode() {
		t.Error("warps in the two directions share a hash")
	}
}

// The forward and gradient ops do not allocate when they run.
func TestStereoOperatorsDoNotAllocate(t *testing.T) {
	if raceEnabled {
		t.Skip("the race detector's sync.Pool drops items at random")
	}
	rng := rand.New(rand.NewPCG(9, 9))
	g := G.NewGraph()
	shape := []int{2, 8, 8, 32}
	l := G.NewTensor(g, tensor.Float32, 4, G.WithShape(shape...), G.WithName("l"))
	r := G.NewTensor(g, tensor.Float32, 4, G.WithShape(shape...), G.WithName("r"))
	d := G.NewTensor(g, tensor.Float32, 4, G.WithShape(2, 1, 8, 32), G.WithName("d"))
	wr, err := nodeWarpFeatures("w", r, d, warp.RebuildLeft)
	if err != nil {
		t.Fatal(err)
	}
	y, err := nodeCorrelation("c", l, wr, 12)
	if err != nil {
		t.Fatal(err)
	}
	p, err := newProbe(y, rng)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := G.Grad(p.node, l, r, d); err != nil {
		t.Fatal(err)
	}
	ops := map[string]*kernelOp{}
	for _, n := range g.AllNodes() {
		if op, ok := n.Op().(*kernelOp); ok {
			ops[n.Name()] = op
		}
	}
	val := func(s ...int) *tensor.Dense {
		v := uniform(rng, tensor.Shape(s).TotalSize(), 0, 0.2)
		return tensor.New(tensor.WithShape(s...), tensor.WithBacking(v))
	}
	vx, vd, vy := val(shape...), val(2, 1, 8, 32), val(2, 12, 8, 32)
	calls := []struct {
		node string
		in   []G.Value
	}{
		{"w", []G.Value{vx, vd}},
		{"c", []G.Value{vx, vx}},
		{"c.dleft", []G.Value{vy, vx}},
		{"c.dright", []G.Value{vy, vx}},
		{"w.dsrc", []G.Value{vx, vx, vd}},
		{"w.ddisp", []G.Value{vx, vx, vd}},
	}
	for _, c := range calls {
		op := ops[c.node]
		if op == nil {
			t.Fatalf("no op %q in the graph", c.node)
		}
		run := func() {
			if _, err := op.Do(c.in...); err != nil {
				t.Fatal(err)
			}
		}
		run()
		if a := testing.AllocsPerRun(20, run); a != 0 {
			t.Errorf("%s: %v allocations per run", c.node, a)
		}
	}
}

// The gradients through the operators are the same bits on any number of
// threads (the kernels split rows, never sums).
func TestStereoOperatorsGOMAXPROCS(t *testing.T) {
	shapes := []tensor.Shape{{2, 16, 12, 64}, {2, 16, 12, 64}, {2, 1, 12, 64}}
	build := func(in []*G.Node) (*G.Node, error) {
		wr, err := nodeWarpFeatures("w", in[1], in[2], warp.RebuildLeft)
		if err != nil {
			return nil, err
		}
		return nodeCorrelation("corr", in[0], wr, 24)
	}
	h := newHarness(t, rand.New(rand.NewPCG(3, 3)), shapes, 0, 0.3, build)
	old := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(old)
	h.run(t) // allocates the gradient buffers that grads clears
	want := h.grads(t)
	for _, procs := range []int{2, 4} {
		runtime.GOMAXPROCS(procs)
		got := h.grads(t)
		for i := range want {
			if d := maxDiff(got[i], want[i]); d != 0 {
				t.Errorf("GOMAXPROCS=%d: gradient of input %d differs from the single-threaded one by %g", procs, i, d)
			}
		}
	}
}
