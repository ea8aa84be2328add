package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeCorrelation adds the correlation cost volume of left and right (both
// (N, C, H, W)) over disps shifts, cpu.Correlation, as the node name; the
// output is (N, disps, H, W), channel k the match of left column x with
// right column x − k. Its gradients are the nodes NAME.dleft and
// NAME.dright, cpu.CorrelationBackward for one input each. It returns an
// error if the inputs are not float32 tensors of one rank-4 shape or disps
// is not positive.
func nodeCorrelation(name string, left, right *G.Node, disps int) (*G.Node, error) {
	what := "correlation " + name
	n, c, h, w, err := shape4(what, left)
	if err != nil {
		return nil, err
	}
	if _, _, _, _, err := shape4(what, right); err != nil {
		return nil, err
	}
	xs := tensor.Shape{n, c, h, w}
	if !sameShape(right.Shape(), xs) {
		return nil, fmt.Errorf("train: correlation %q: right input %q has shape %v, left %q has %v", name, right.Name(), right.Shape(), left.Name(), xs)
	}
	if disps <= 0 {
		return nil, fmt.Errorf("train: correlation %q: disparity count %d, want at least 1", name, disps)
	}
	ys := tensor.Shape{n, disps, h, w}
	param := fmt.Sprintf("disps %d", disps)
	op := newKernelOp("correlation", name, param, ys, xs, xs)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.Correlation(y, in[0], in[1], n, c, h, w, disps)
		return nil
	}
	op.diff = []bool{true, true}
	op.grad = func(inputs G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		dl := newKernelOp("correlation.dleft", name, param, xs, ys, xs)
		dl.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			p.CorrelationBackward(out, nil, in[0], nil, in[1], n, c, h, w, disps)
			return nil
		}
		dr := newKernelOp("correlation.dright", name, param, xs, ys, xs)
		dr.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			p.CorrelationBackward(nil, out, in[0], in[1], nil, n, c, h, w, disps)
			return nil
		}
		gl, err := apply(dl, name+".dleft", dy, inputs[1])
		if err != nil {
			return nil, err
		}
		gr, err := apply(dr, name+".dright", dy, inputs[0])
		if err != nil {
			return nil, err
		}
		return G.Nodes{gl, gr}, nil
	}
	return apply(op, name, left, right)
}
