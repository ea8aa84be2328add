package train

import (
	"fmt"
	"github.com/parallaxdepth/parallax/model/internal/cpu"

	"github.com/parallaxdepth/parallax/warp"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeWarpFeatures adds src (N, C, H, W) resampled along its rows by the
// disparity disp (N, 1, H, W, a fraction of the width W), warp.Forward in
// direction dir, as the node name: with warp.RebuildLeft it reads the
// right view's features at x − d·W, aligning them with the left view. The
// border is warp.Zero, as in the objective: a sample outside the source has
// no features, and a zero vector is no evidence for a later matching cost,
// where a clamped one would repeat the edge column. Its gradients are the
// nodes NAME.dsrc and NAME.ddisp, warp.Backward for one input each. It
// returns an error if the shapes disagree or dir is not a defined
// warp.Direction.
func nodeWarpFeatures(name string, src, disp *G.Node, dir warp.Direction) (*G.Node, error) {
	what := "warp " + name
	n, c, h, w, err := shape4(what, src)
	if err != nil {
		return nil, err
	}
	dn, dc, dh, dw, err := shape4(what, disp)
	if err != nil {
		return nil, err
	}
	if dn != n || dc != 1 || dh != h || dw != w {
		return nil, fmt.Errorf("train: warp %q: disparity %q has shape %v, want (%d, 1, %d, %d) for source %q", name, disp.Name(), disp.Shape(), n, h, w, src.Name())
	}
	if dir != warp.RebuildLeft && dir != warp.RebuildRight {
		return nil, fmt.Errorf("train: warp %q: unknown direction %v", name, dir)
	}
	const border = warp.Zero
	s := warp.Shape{N: n, C: c, H: h, W: w}
	xs, ds := tensor.Shape{n, c, h, w}, tensor.Shape{n, 1, h, w}
	param := fmt.Sprintf("%v %v", dir, border)
	op := newKernelOp("warp", name, param, xs, xs, ds)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		warp.Forward(y, nil, in[0], in[1], s, dir, border)
		return nil
	}
	op.diff = []bool{true, true}
	op.grad = func(inputs G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		dsrc := newKernelOp("warp.dsrc", name, param, xs, xs, xs, ds)
		dsrc.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			warp.Backward(out, nil, in[0], in[1], in[2], s, dir, border)
			return nil
		}
		ddisp := newKernelOp("warp.ddisp", name, param, ds, xs, xs, ds)
		ddisp.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			warp.Backward(nil, out, in[0], in[1], in[2], s, dir, border)
			return nil
		}
		gs, err := apply(dsrc, name+".dsrc", dy, inputs[0], inputs[1])
		if err != nil {
			return nil, err
		}
		gd, err := apply(ddisp, name+".ddisp", dy, inputs[0], inputs[1])
		if err != nil {
			return nil, err
		}
		return G.Nodes{gs, gd}, nil
	}
	return apply(op, name, src, disp)
}
