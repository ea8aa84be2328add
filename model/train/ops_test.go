package train

import (
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// Each operator's forward value must equal its cpu kernel called directly
// (the operators only wrap kernels), and the gradients gorgonia's
// TapeMachine computes through the operators' SymDiff must match central
// finite differences (gonum diff/fd) of a random linear probe of the
// output. Tolerances allow for float32 evaluation of the network with a
// finite-difference step of 2⁻¹⁰.
func TestOperatorGradients(t *testing.T) {
	conv := func(spec convSpec) func([]*G.Node) (*G.Node, error) {
		return func(in []*G.Node) (*G.Node, error) { return nodeConv2D("c", in[0], in[1], in[2], spec) }
	}
	cases := []struct {
		name   string
		shapes []tensor.Shape
		lo, hi float64
		build  func([]*G.Node) (*G.Node, error)
		want   func(in [][]float32) []float32
	}{
		{
			name:   "conv3x3 reflect stride 2",
			shapes: []tensor.Shape{{2, 3, 6, 8}, {4, 3, 3, 3}, {4}},
			lo:     -1, hi: 1,
			build: conv(convSpec{Kernel: 3, Stride: 2, Pad: 1, Reflect: true}),
			want: func(in [][]float32) []float32 {
				p, _ := cpu.NewConv2D(cpu.ConvParams{InC: 3, OutC: 4, Kernel: 3, Stride: 2, Pad: 1, Padding: cpu.ReflectPad}, 2, 6, 8)
				y := make([]float32, 2*4*3*4)
				p.Forward(y, in[0], in[1], in[2])
				return y
			},
		},
		{
			name:   "conv3x3 zero pad stride 1",
			shapes: []tensor.Shape{{1, 2, 5, 4}, {3, 2, 3, 3}, {3}},
			lo:     -1, hi: 1,
			build: conv(convSpec{Kernel: 3, Pad: 1}),
			want: func(in [][]float32) []float32 {
				p, _ := cpu.NewConv2D(cpu.ConvParams{InC: 2, OutC: 3, Kernel: 3, Pad: 1}, 1, 5, 4)
				y := make([]float32, 3*5*4)
				p.Forward(y, in[0], in[1], in[2])
				return y
			},
		},
		{
			name:   "elu",
			shapes: []tensor.Shape{{2, 3, 4, 5}},
			lo:     -2, hi: 2,
			build: func(in []*G.Node) (*G.Node, error) { return nodeELU("e", in[0]) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, len(in[0]))
				cpu.ELU(y, in[0])
				return y
			},
		},
		{
			name:   "sigmoid scaled by 0.3",
			shapes: []tensor.Shape{{2, 2, 3, 4}},
			lo:     -4, hi: 4,
			build: func(in []*G.Node) (*G.Node, error) { return nodeSigmoidScale("s", in[0], 0.3) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, len(in[0]))
				cpu.SigmoidScale(y, in[0], 0.3)
				return y
			},
		},
		{
			name:   "scale and shift",
			shapes: []tensor.Shape{{1, 2, 3, 4}},
			lo:     -1, hi: 1,
			build: func(in []*G.Node) (*G.Node, error) { return nodeScale("k", in[0], -2.5, 0.75) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, len(in[0]))
				for i, v := range in[0] {
					y[i] = -2.5*v + 0.75 // the definition
				}
				return y
			},
		},
		{
			name:   "bilinear 2x",
			shapes: []tensor.Shape{{2, 2, 3, 4}},
			lo:     -1, hi: 1,
			build: func(in []*G.Node) (*G.Node, error) { return nodeUpsampleBilinear2x("u", in[0]) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 4*len(in[0]))
				cpu.UpsampleBilinear2x(y, in[0], 2, 2, 3, 4)
				return y
			},
		},
		{
			name:   "nearest 2x",
			shapes: []tensor.Shape{{1, 3, 2, 3}},
			lo:     -1, hi: 1,
			build: func(in []*G.Node) (*G.Node, error) { return nodeUpsampleNearest2x("u", in[0]) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 4*len(in[0]))
				cpu.UpsampleNearest2x(y, in[0], 1, 3, 2, 3)
				return y
			},
		},
		{
			name:   "concat of three",
			shapes: []tensor.Shape{{2, 1, 3, 4}, {2, 3, 3, 4}, {2, 2, 3, 4}},
			lo:     -1, hi: 1,
			build: func(in []*G.Node) (*G.Node, error) { return nodeConcat("cat", in...) },
			want: func(in [][]float32) []float32 {
				y := make([]float32, 2*6*3*4)
				cpu.Concat(y, in, []int{1, 3, 2}, 2, 3, 4)
				return y
			},
		},
		{
			// x reaches the output along two paths, so gorgonia sums two
			// gradient terms for it; w1 and w2 are two layers' weights.
			name:   "conv, elu, concat with the input, conv, head",
			shapes: []tensor.Shape{{2, 2, 4, 6}, {3, 2, 3, 3}, {3}, {2, 5, 3, 3}, {2}},
			lo:     -1, hi: 1,
			build: func(in []*G.Node) (*G.Node, error) {
				a, err := nodeConv2D("c1", in[0], in[1], in[2], convSpec{Pad: 1, Reflect: true})
				if err != nil {
					return nil, err
				}
				e, err := nodeELU("e1", a)
				if err != nil {
					return nil, err
				}
				c, err := nodeConcat("cat", e, in[0])
				if err != nil {
					return nil, err
				}
				b, err := nodeConv2D("c2", c, in[3], in[4], convSpec{Pad: 1, Reflect: true})
				if err != nil {
					return nil, err
				}
				return nodeSigmoidScale("head", b, 0.3)
			},
			want: func(in [][]float32) []float32 {
				p1, _ := cpu.NewConv2D(cpu.ConvParams{InC: 2, OutC: 3, Kernel: 3, Pad: 1, Padding: cpu.ReflectPad}, 2, 4, 6)
				p2, _ := cpu.NewConv2D(cpu.ConvParams{InC: 5, OutC: 2, Kernel: 3, Pad: 1, Padding: cpu.ReflectPad}, 2, 4, 6)
				a := make([]float32, 2*3*24)
				p1.Forward(a, in[0], in[1], in[2])
				cpu.ELU(a, a)
				c := make([]float32, 2*5*24)
				cpu.Concat(c, [][]float32{a, in[0]}, []int{3, 2}, 2, 4, 6)
				y := make([]float32, 2*2*24)
				p2.Forward(y, c, in[3], in[4])
				cpu.SigmoidScale(y, y, 0.3)
				return y
			},
		},
	}
	for i, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			rng := rand.New(rand.NewPCG(uint64(i)+1, 7))
			h := newHarness(t, rng, c.shapes, c.lo, c.hi, c.build)
			h.run(t)
			got := h.out.Value().Data().([]float32)
			if d := maxDiff(got, c.want(h.vals)); d != 0 {
				t.Errorf("forward differs from the cpu kernel by %g", d)
			}
			h.checkFD(t, 1.0/1024, 2e-3, 2e-3)
		})
	}
}

// A layer fed by the image builds no input-gradient node.
func TestConvNoInputGrad(t *testing.T) {
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 3, 4, 4), G.WithName("x"))
	w := G.NewTensor(g, tensor.Float32, 4, G.WithShape(2, 3, 3, 3), G.WithName("w"))
	b := G.NewVector(g, tensor.Float32, G.WithShape(2), G.WithName("b"))
	y, err := nodeConv2D("c", x, w, b, convSpec{Pad: 1, NoInputGrad: true})
	if err != nil {
		t.Fatal(err)
	}
	if d := y.Op().(G.SDOp).DiffWRT(3); d[0] || !d[1] || !d[2] {
		t.Errorf("DiffWRT = %v, want [false true true]", d)
	}
	p, err := newProbe(y, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := G.Grad(p.node, w, b); err != nil {
		t.Fatal(err)
	}
	for _, n := range g.AllNodes() {
		if n.Name() == "c.dx" {
			t.Errorf("graph has an input-gradient node %v", n)
		}
	}
}

// The hash covers the kind, the layer name, the settings and the shapes.
func TestHashcodeDiffers(t *testing.T) {
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 3, 8, 8), G.WithName("x"))
	x2 := G.NewTensor(g, tensor.Float32, 4, G.WithShape(2, 3, 8, 8), G.WithName("x2"))
	w := G.NewTensor(g, tensor.Float32, 4, G.WithShape(4, 3, 3, 3), G.WithName("w"))
	b := G.NewVector(g, tensor.Float32, G.WithShape(4), G.WithName("b"))
	mk := func(name string, x *G.Node, s convSpec) uint32 {
		n, err := nodeConv2D(name, x, w, b, s)
		if err != nil {
			t.Fatal(err)
		}
		return n.Op().Hashcode()
	}
	base := convSpec{Pad: 1}
	hs := map[string]uint32{
		"base":    mk("a", x, base),
		"name":    mk("b", x, base),
		"stride":  mk("c", x, convSpec{Pad: 1, Stride: 2}),
		"pad":     mk("a", x, convSpec{Pad: 0}),
		"reflect": mk("a", x, convSpec{Pad: 1, Reflect: true}),
		"batch":   mk("a", x2, base),
	}
	seen := map[uint32]string{}
	for k, h := range hs {
		if o, ok := seen[h]; ok {
			t.Errorf("%s and %s have the same hash %x", k, o, h)
		}
		seen[h] = k
	}
	e1, _ := nodeSigmoidScale("h", x, 0.3)
	e2, _ := nodeSigmoidScale("h", x, 0.2)
	if e1.Op().Hashcode() == e2.Op().Hashcode() {
		t.Error("sigmoid heads with different scales share a hash")
	}
	u1, _ := nodeUpsampleNearest2x("u", x)
	u2, _ := nodeUpsampleBilinear2x("u", x)
	if u1.Op().Hashcode() == u2.Op().Hashcode() {
		t.Error("nearest and bilinear upsampling share a hash")
	}
}

// Two layers with the same input, weights and settings but different names
// stay two nodes, and each runs (gorgonia would merge them if their ops
// hashed equal).
func TestIdenticalLayersStayDistinct(t *testing.T) {
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 4, 4), G.WithName("x"))
	w := G.NewTensor(g, tensor.Float32, 4, G.WithShape(2, 2, 3, 3), G.WithName("w"))
	b := G.NewVector(g, tensor.Float32, G.WithShape(2), G.WithName("b"))
	before := len(g.AllNodes())
	y1, err := nodeConv2D("first", x, w, b, convSpec{Pad: 1})
	if err != nil {
		t.Fatal(err)
	}
	y2, err := nodeConv2D("second", x, w, b, convSpec{Pad: 1})
	if err != nil {
		t.Fatal(err)
	}
	if y1 == y2 || y1.ID() == y2.ID() {
		t.Fatal("the two layers were merged into one node")
	}
	if got := len(g.AllNodes()) - before; got != 2 {
		t.Errorf("graph grew by %d nodes, want 2", got)
	}
	if y1.Op() == y2.Op() {
		t.Error("the two layers share an op (and its output buffer)")
	}
}

// The operators do not allocate when they run: each owns its output buffer
// and the cpu plans own their workspaces.
func TestOperatorsDoNotAllocate(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	g := G.NewGraph()
	x := G.NewTensor(g, tensor.Float32, 4, G.WithShape(2, 3, 8, 8), G.WithName("x"))
	w := G.NewTensor(g, tensor.Float32, 4, G.WithShape(4, 3, 3, 3), G.WithName("w"))
	b := G.NewVector(g, tensor.Float32, G.WithShape(4), G.WithName("b"))
	y, err := nodeConv2D("c", x, w, b, convSpec{Pad: 1, Reflect: true})
	if err != nil {
		t.Fatal(err)
	}
	e, err := nodeELU("e", y)
	if err != nil {
		t.Fatal(err)
	}
	cat, err := nodeConcat("cat", e, x)
	if err != nil {
		t.Fatal(err)
	}
	vx := tensor.New(tensor.WithShape(2, 3, 8, 8), tensor.WithBacking(uniform(rng, 2*3*64, 0, 1)))
	vw := tensor.New(tensor.WithShape(4, 3, 3, 3), tensor.WithBacking(uniform(rng, 4*27, -1, 1)))
	vb := tensor.New(tensor.WithShape(4), tensor.WithBacking(uniform(rng, 4, -1, 1)))
	conv, elu, concat := y.Op().(*kernelOp), e.Op().(*kernelOp), cat.Op().(*kernelOp)
	var vy, ve G.Value
	run := func() {
		var err error
		if vy, err = conv.Do(vx, vw, vb); err != nil {
			t.Fatal(err)
		}
		if ve, err = elu.Do(vy); err != nil {
			t.Fatal(err)
		}
		if _, err = concat.Do(ve, vx); err != nil {
			t.Fatal(err)
		}
	}
	run()
	if n := testing.AllocsPerRun(20, run); n != 0 {
		t.Errorf("%v allocations per run", n)
	}
	// A value of the wrong shape is an error, not a panic.
	if _, err := conv.Do(vw, vw, vb); err == nil {
		t.Error("a wrong input shape was accepted")
	}
	if _, err := elu.Do(G.NewF32(1)); err == nil {
		t.Error("a scalar was accepted for a tensor input")
	}
}
