package train

import (
	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeUpsampleBilinear2x adds the bilinear 2× upsampling of x (N, C, H, W),
// cpu.UpsampleBilinear2x, as the node name; the output is (N, C, 2H, 2W).
func nodeUpsampleBilinear2x(name string, x *G.Node) (*G.Node, error) {
	return upsample2x("upsample.bilinear", name, x, cpu.Procs.UpsampleBilinear2x, cpu.Procs.UpsampleBilinear2xBackward)
}

// nodeUpsampleNearest2x adds the nearest-neighbour 2× upsampling of x
// (N, C, H, W), cpu.UpsampleNearest2x, as the node name.
func nodeUpsampleNearest2x(name string, x *G.Node) (*G.Node, error) {
	return upsample2x("upsample.nearest", name, x, cpu.Procs.UpsampleNearest2x, cpu.Procs.UpsampleNearest2xBackward)
}

func upsample2x(kind, name string, x *G.Node, fwd, bwd func(p cpu.Procs, dst, src []float32, n, c, h, w int)) (*G.Node, error) {
	n, c, h, w, err := shape4(kind+" "+name, x)
	if err != nil {
		return nil, err
	}
	xs, ys := tensor.Shape{n, c, h, w}, tensor.Shape{n, c, 2 * h, 2 * w}
	op := newKernelOp(kind, name, "", ys, xs)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		fwd(p, y, in[0], n, c, h, w)
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp(kind+".dx", name, "", xs, ys)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			bwd(p, out, in[0], n, c, h, w)
			return nil
		}
		g, err := apply(d, name+".dx", dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}
