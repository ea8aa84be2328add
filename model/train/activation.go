package train

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeELU adds the exponential linear unit (alpha = 1) of x, cpu.ELU, as the
// node name. Its gradient is cpu.ELUBackward on the output.
func nodeELU(name string, x *G.Node) (*G.Node, error) {
	s, err := anyShape("elu "+name, x)
	if err != nil {
		return nil, err
	}
	op := newKernelOp("elu", name, "", s, s)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.ELU(y, in[0])
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(_ G.Nodes, y, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp("elu.dx", name, "", s, s, s)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			p.ELUBackward(out, in[1], in[0])
			return nil
		}
		g, err := apply(d, name+".dx", y, dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}

// nodeSigmoidScale adds scale·sigmoid(x), cpu.SigmoidScale, as the node name:
// the disparity head, y = d_max·sigmoid(x). Its gradient is
// cpu.SigmoidScaleBackward on the output. It returns an error if scale is
// not finite.
func nodeSigmoidScale(name string, x *G.Node, scale float64) (*G.Node, error) {
	s, err := anyShape("sigmoid "+name, x)
	if err != nil {
		return nil, err
	}
	if math.IsNaN(scale) || math.IsInf(scale, 0) {
		return nil, fmt.Errorf("train: sigmoid %q: scale %v is not finite", name, scale)
	}
	k := float32(scale)
	param := fmt.Sprintf("scale %v", k)
	op := newKernelOp("sigmoid", name, param, s, s)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.SigmoidScale(y, in[0], k)
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(_ G.Nodes, y, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp("sigmoid.dx", name, param, s, s, s)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			p.SigmoidScaleBackward(out, in[1], in[0], k)
			return nil
		}
		g, err := apply(d, name+".dx", y, dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}

// nodeScale adds factor·x + shift, cpu.ScaleShift, as the node name (the
// stereo network shifts a disparity by a constant number of pixels). It
// returns an error if factor or shift is not finite.
func nodeScale(name string, x *G.Node, factor, shift float64) (*G.Node, error) {
	s, err := anyShape("scale "+name, x)
	if err != nil {
		return nil, err
	}
	if math.IsNaN(factor) || math.IsInf(factor, 0) || math.IsNaN(shift) || math.IsInf(shift, 0) {
		return nil, fmt.Errorf("train: scale %q: factor %v and shift %v must be finite", name, factor, shift)
	}
	k, b := float32(factor), float32(shift)
	param := fmt.Sprintf("factor %v shift %v", k, b)
	op := newKernelOp("scale", name, param, s, s)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.ScaleShift(y, in[0], k, b)
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp("scale.dx", name, param, s, s)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			p.ScaleShift(out, in[0], k, 0)
			return nil
		}
		g, err := apply(d, name+".dx", dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}

// anyShape returns the shape of a float32 tensor node with positive sizes.
func anyShape(what string, x *G.Node) (tensor.Shape, error) {
	if x == nil {
		return nil, fmt.Errorf("train: %s: nil node", what)
	}
	s := x.Shape()
	if s.IsScalar() || s.TotalSize() <= 0 {
		return nil, fmt.Errorf("train: %s: input %q has shape %v, want a tensor", what, x.Name(), s)
	}
	if x.Dtype() != tensor.Float32 {
		return nil, fmt.Errorf("train: %s: input %q is %v, want float32", what, x.Name(), x.Dtype())
	}
	return s.Clone(), nil
}
