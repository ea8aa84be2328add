package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeConcat adds the channel concatenation of xs (each (N, Ci, H, W), equal
// N, H and W), cpu.Concat, as the node name. It returns an error if there
// are no inputs or their shapes disagree.
func nodeConcat(name string, xs ...*G.Node) (*G.Node, error) {
	if len(xs) == 0 {
		return nil, fmt.Errorf("train: concat %q: no inputs", name)
	}
	chans := make([]int, len(xs))
	shapes := make([]tensor.Shape, len(xs))
	var n, h, w, total int
	for i, x := range xs {
		ni, ci, hi, wi, err := shape4("concat "+name, x)
		if err != nil {
			return nil, err
		}
		if i == 0 {
			n, h, w = ni, hi, wi
		} else if ni != n || hi != h || wi != w {
			return nil, fmt.Errorf("train: concat %q: input %q has shape %v, want (%d, C, %d, %d)", name, x.Name(), x.Shape(), n, h, w)
		}
		chans[i] = ci
		shapes[i] = tensor.Shape{ni, ci, hi, wi}
		total += ci
	}
	ys := tensor.Shape{n, total, h, w}
	param := fmt.Sprint(chans)
	op := newKernelOp("concat", name, param, ys, shapes...)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.Concat(y, in, chans, n, h, w)
		return nil
	}
	op.diff = make([]bool, len(xs))
	for i := range op.diff {
		op.diff[i] = true
	}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		grads := make(G.Nodes, len(xs))
		for i := range xs {
			d := newKernelOp("concat.dx", name, fmt.Sprintf("%s part %d", param, i), shapes[i], ys)
			parts := make([][]float32, len(xs))
			d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
				parts[i] = out
				p.ConcatBackward(parts, in[0], chans, n, h, w)
				parts[i] = nil
				return nil
			}
			var err error
			if grads[i], err = apply(d, fmt.Sprintf("%s.dx%d", name, i), dy); err != nil {
				return nil, err
			}
		}
		return grads, nil
	}
	return apply(op, name, xs...)
}
