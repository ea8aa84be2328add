package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// convSpec describes a convolution layer with a square kernel. The zero
// value of each field is its default.
type convSpec struct {
	// Kernel is the kernel side. If Kernel is 0 it is defaulted to 3.
	Kernel int
	// Stride is the output step in input pixels. If 0 it is defaulted to 1.
	Stride int
	// Dilation is the spacing of the taps. If 0 it is defaulted to 1.
	Dilation int
	// Pad is the padding width on every side.
	Pad int
	// Reflect selects reflection padding (PyTorch's "reflect"); the default
	// is zero padding.
	Reflect bool
	// NoInputGrad skips the gradient with respect to the input, for a layer
	// fed by the image: no node is built for it.
	NoInputGrad bool
}

// nodeConv2D adds the convolution layer name, y = conv(x, w) + b, to x's
// graph: x has shape (N, C, H, W), w (O, C, K, K) in OIHW order and b (O).
// The forward pass and the three gradients (input, weights, bias) share one
// cpu.Conv2D plan and its workspaces. The node is called name. nodeConv2D
// returns an error if a shape does not fit the layer.
func nodeConv2D(name string, x, w, b *G.Node, spec convSpec) (*G.Node, error) {
	n, c, h, wd, err := shape4("conv "+name, x)
	if err != nil {
		return nil, err
	}
	if w == nil || b == nil {
		return nil, fmt.Errorf("train: conv %q: nil weight or bias", name)
	}
	if spec.Kernel == 0 {
		spec.Kernel = 3
	}
	ws := w.Shape()
	if len(ws) != 4 || ws[1] != c || ws[2] != spec.Kernel || ws[3] != spec.Kernel {
		return nil, fmt.Errorf("train: conv %q: weight %q has shape %v, want (O, %d, %d, %d)", name, w.Name(), ws, c, spec.Kernel, spec.Kernel)
	}
	if bs := b.Shape(); len(bs) != 1 || bs[0] != ws[0] {
		return nil, fmt.Errorf("train: conv %q: bias %q has shape %v, want (%d)", name, b.Name(), bs, ws[0])
	}
	p := cpu.ConvParams{InC: c, OutC: ws[0], Kernel: spec.Kernel, Stride: spec.Stride, Dilation: spec.Dilation, Pad: spec.Pad}
	if spec.Reflect {
		p.Padding = cpu.ReflectPad
	}
	plan, err := cpu.NewConv2D(p, n, h, wd)
	if err != nil {
		return nil, fmt.Errorf("train: conv %q: %w", name, err)
	}
	p = plan.Params()
	_, oc, oh, ow := plan.OutShape()
	xs, wsh, bsh := tensor.Shape{n, c, h, wd}, tensor.Shape{oc, c, p.Kernel, p.Kernel}, tensor.Shape{oc}
	ys := tensor.Shape{n, oc, oh, ow}
	param := fmt.Sprintf("k%d s%d d%d p%d %v", p.Kernel, p.Stride, p.Dilation, p.Pad, p.Padding)

	op := newKernelOp("conv", name, param, ys, xs, wsh, bsh)
	op.plan = plan
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		plan.SetMaxProcs(p)
		plan.Forward(y, in[0], in[1], in[2])
		return nil
	}
	op.diff = []bool{!spec.NoInputGrad, true, true}
	op.grad = func(in G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		grads := make(G.Nodes, 3)
		var err error
		if !spec.NoInputGrad {
			dx := newKernelOp("conv.dx", name, param, xs, wsh, ys)
			dx.run = func(p cpu.Procs, out []float32, in [][]float32) error {
				plan.SetMaxProcs(p)
				plan.Backward(out, nil, nil, nil, in[0], in[1])
				return nil
			}
			if grads[0], err = apply(dx, name+".dx", in[1], dy); err != nil {
				return nil, err
			}
		}
		dw := newKernelOp("conv.dw", name, param, wsh, xs, ys)
		dw.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			plan.SetMaxProcs(p)
			plan.Backward(nil, out, nil, in[0], nil, in[1])
			return nil
		}
		if grads[1], err = apply(dw, name+".dweight", in[0], dy); err != nil {
			return nil, err
		}
		db := newKernelOp("conv.db", name, param, bsh, ys)
		db.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			plan.SetMaxProcs(p)
			plan.Backward(nil, nil, out, nil, nil, in[0])
			return nil
		}
		if grads[2], err = apply(db, name+".dbias", dy); err != nil {
			return nil, err
		}
		return grads, nil
	}
	return apply(op, name, x, w, b)
}

// shareConvScratch gives the convolutions of g, which the TapeMachine runs
// one after another, one padded-input and one packed-weight buffer, each
// the size of the largest a layer needs, instead of a pair each
// (cpu.Conv2D.ShareForwardScratch; the plans pad their input again for the
// backward pass). At 320×256 the default network's pairs took 37 MB.
func shareConvScratch(g *G.ExprGraph) {
	var plans []*cpu.Conv2D
	var nx, nw int
	for _, n := range g.AllNodes() {
		if op, ok := n.Op().(*kernelOp); ok && op.plan != nil {
			x, w := op.plan.ForwardScratch()
			nx, nw = max(nx, x), max(nw, w)
			plans = append(plans, op.plan)
		}
	}
	if nx == 0 && nw == 0 {
		return
	}
	xpad, wpack := make([]float32, nx), make([]float32, nw)
	for _, p := range plans {
		p.ShareForwardScratch(xpad, wpack)
	}
}
