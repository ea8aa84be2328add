package train

import (
	"fmt"
	"slices"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// nodeAdd adds a + b (equal shapes), cpu.Add, as the node name. The
// gradient of each input is the upstream gradient itself, passed on by a
// copy node per input (named NAME.dx0, NAME.dx1) so that no node is shared.
func nodeAdd(name string, a, b *G.Node) (*G.Node, error) {
	s, err := anyShape("add "+name, a)
	if err != nil {
		return nil, err
	}
	if t, err := anyShape("add "+name, b); err != nil {
		return nil, err
	} else if !sameShape(s, t) {
		return nil, fmt.Errorf("train: add %q: inputs have shapes %v and %v", name, s, t)
	}
	op := newKernelOp("add", name, "", s, s, s)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		p.Add(y, in[0], in[1])
		return nil
	}
	op.diff = []bool{true, true}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		grads := make(G.Nodes, 2)
		for i := range grads {
			d := newKernelOp("add.dx", name, fmt.Sprint(i), s, s)
			d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
				copy(out, in[0])
				return nil
			}
			var err error
			if grads[i], err = apply(d, fmt.Sprintf("%s.dx%d", name, i), dy); err != nil {
				return nil, err
			}
		}
		return grads, nil
	}
	return apply(op, name, a, b)
}

// nodePackPair turns a stereo network's one-channel output x, (2·n, 1, H, W),
// into (n, 2, H, W) with model.PackPair: channel 0 d_L, channel 1 d_R
// mirrored back from the swapped pair. Its gradient is model.UnpackPair.
func nodePackPair(name string, x *G.Node, n int) (*G.Node, error) {
	nb, c, h, w, err := shape4("pack "+name, x)
	if err != nil {
		return nil, err
	}
	if c != 1 || nb != 2*n {
		return nil, fmt.Errorf("train: pack %q: input %q has shape %v, want (%d, 1, H, W)", name, x.Name(), x.Shape(), 2*n)
	}
	xs, ys := tensor.Shape{nb, 1, h, w}, tensor.Shape{n, 2, h, w}
	op := newKernelOp("pack", name, "", ys, xs)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		model.PackPair(y, in[0], n, h, w)
		return nil
	}
	op.diff = []bool{true}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp("pack.dx", name, "", xs, ys)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			model.UnpackPair(out, in[0], n, h, w)
			return nil
		}
		g, err := apply(d, name+".dx", dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}

// SetPair copies a batch of pairs (left, right: (Batch, 3, H, W), RGB in
// [0, 1]) into the input of a stereo network: the left views, then the
// right views. It returns an error for a one-image
// network, a view of the wrong shape, or NaN or Inf.
func (net *network) SetPair(left, right *planar.Image) error {
	if !net.Arch.IsStereo() {
		return fmt.Errorf("train: the network is a one-image network: give the left image alone (SetInput)")
	}
	in := net.Arch.Input
	if err := planar.CheckPair(left, right, net.Batch, in.C, in.H, in.W); err != nil {
		return fmt.Errorf("train: %w", err)
	}
	k := len(left.Pix)
	// The matching depends on the images alone: a batch equal to the last
	// one (net.input, which only SetPair writes in a stereo network) (adaptation on one pair, repeated validation batches) keeps it,
	// which saves the matcher's two runs per pair and step.
	if net.match != nil && (!slices.Equal(net.input[:k], left.Pix) || !slices.Equal(net.input[k:], right.Pix)) {
		net.match.Invalidate()
	}
	copy(net.input[:k], left.Pix)
	copy(net.input[k:], right.Pix)
	return nil
}

// matchNode adds the OpMatch layer l: model.Matching pooled to the layer's
// resolution, computed once per run from the input node for every such
// layer. It has no gradient: it depends on the images alone.
func (net *network) matchNode(l *model.Layer) (*G.Node, error) {
	a := net.Arch
	if len(l.Inputs) != 1 || l.Inputs[0] != model.InputName || !a.IsStereo() || (l.Out.C != 1 && l.Out.C != 2) {
		return nil, fmt.Errorf("train: network: layer %q: a match reads the input of a stereo network and gives 1 or 2 channels", l.Name)
	}
	level := a.Config.MatchLevel()
	for a.Input.H>>level > l.Out.H {
		level++
	}
	if a.Input.H>>level != l.Out.H || a.Input.W>>level != l.Out.W {
		return nil, fmt.Errorf("train: network: layer %q: %v is not the input %v at 1/2^k", l.Name, l.Out, a.Input)
	}
	if net.match == nil {
		var err error
		if net.match, err = model.NewMatching(net.Batch, a.Input.W, a.Input.H, a.Config.DMax, a.Config.MatchLevel()); err != nil {
			return nil, fmt.Errorf("train: %w", err)
		}
	}
	nb := 2 * net.Batch
	xs := tensor.Shape{nb, 3, a.Input.H, a.Input.W}
	c := l.Out.C
	ys := tensor.Shape{nb, c, l.Out.H, l.Out.W}
	op := newKernelOp("match", l.Name, fmt.Sprint(level), ys, xs)
	m := net.match
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		if err := m.SetMaxProcs(int(p)); err != nil {
			return fmt.Errorf("train: %w", err)
		}
		if err := m.Compute(in[0]); err != nil {
			return fmt.Errorf("train: %w", err)
		}
		m.Pool(y, level, c)
		return nil
	}
	op.diff = []bool{false}
	return apply(op, l.Name, net.Input)
}

// nodePairView adds model.PairView of x, (2n, C, H, W), as the node name; its
// gradient (if diff) is model.PairViewBackward.
func nodePairView(name string, x *G.Node, v model.View, diff bool) (*G.Node, error) {
	nb, c, h, w, err := shape4("pairview "+name, x)
	if err != nil {
		return nil, err
	}
	if nb%2 != 0 {
		return nil, fmt.Errorf("train: pairview %q: batch %d of %q is not even", name, nb, x.Name())
	}
	n := nb / 2
	s := tensor.Shape{nb, c, h, w}
	op := newKernelOp("pairview", name, v.String(), s, s)
	op.run = func(p cpu.Procs, y []float32, in [][]float32) error {
		model.PairView(y, in[0], v, n, c, h, w)
		return nil
	}
	op.diff = []bool{diff}
	op.grad = func(_ G.Nodes, _, dy *G.Node) (G.Nodes, error) {
		d := newKernelOp("pairview.dx", name, v.String(), s, s)
		d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
			model.PairViewBackward(out, in[0], v, n, c, h, w)
			return nil
		}
		g, err := apply(d, name+".dx", dy)
		return G.Nodes{g}, err
	}
	return apply(op, name, x)
}
