package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// network is the disparity network of a model.Arch as a gorgonia graph
// for batches of a fixed size, built by walking Arch.Layers: the same
// description the graph-free model.Net walks, so training and inference
// cannot disagree.
//
// Node names: the input is model.InputName; a layer's output node carries
// the layer's name; a convolution with an activation has its
// pre-activation node called NAME.pre; parameters are named as in
// Arch.Params (NAME.weight, NAME.bias). A sigmoid head followed by its
// d_max scale (headS then dispS) becomes one nodeSigmoidScale node dispS.
type network struct {
	// Arch is the architecture the graph was built from.
	Arch *model.Arch
	// Batch is the number of images per run.
	Batch int
	// Graph is the gorgonia graph holding the network.
	Graph *G.ExprGraph
	// Input is the (Batch, 3, H, W) image node; for a stereo architecture
	// it is (2·Batch, 3, H, W), the left views then the right views (see
	// SetPair).
	Input *G.Node
	// Params are the learned tensors, in Arch.Params order.
	Params []*G.Node
	// Outputs are the disparity nodes, (Batch, 2, H/2^s, W/2^s), finest
	// first.
	Outputs [model.Scales]*G.Node

	tensors map[string]*G.Node
	params  map[string][]float32
	input   []float32
	match   *model.Matching
}

// buildNetwork adds the network of a for batches of batch images to g. The
// parameters start at zero; set them with SetWeights. It returns an error
// if a is nil, batch is not positive, or a layer does not fit.
func buildNetwork(g *G.ExprGraph, a *model.Arch, batch int) (*network, error) {
	if g == nil || a == nil {
		return nil, fmt.Errorf("train: network: nil graph or architecture")
	}
	if batch <= 0 {
		return nil, fmt.Errorf("train: network: batch size %d must be positive", batch)
	}
	if _, err := planar.NewChecked(batch, a.Input.C, a.Input.H, a.Input.W); err != nil {
		return nil, fmt.Errorf("train: network: %w", err)
	}
	net := &network{Arch: a, Batch: batch, Graph: g, tensors: map[string]*G.Node{}, params: map[string][]float32{}}
	in := a.Input
	nb := batch
	if a.IsStereo() {
		nb = 2 * batch
	}
	net.input = make([]float32, nb*in.Len())
	net.Input = G.NewTensor(g, tensor.Float32, 4, G.WithShape(nb, in.C, in.H, in.W), G.WithName(model.InputName),
		G.WithValue(tensor.New(tensor.WithShape(nb, in.C, in.H, in.W), tensor.WithBacking(net.input))))
	net.tensors[model.InputName] = net.Input
	for _, p := range a.Params {
		v := make([]float32, p.Len())
		n := G.NewTensor(g, tensor.Float32, len(p.Shape), G.WithShape(p.Shape...), G.WithName(p.Name),
			G.WithValue(tensor.New(tensor.WithShape(p.Shape...), tensor.WithBacking(v))))
		net.Params = append(net.Params, n)
		net.params[p.Name] = v
		net.tensors[p.Name] = n
	}

	uses := map[string]int{}
	for _, l := range a.Layers {
		for _, name := range l.Inputs {
			uses[name]++
		}
	}
	for _, o := range a.Outputs {
		uses[o]++
	}
	fused := map[string]bool{} // sigmoid heads folded into their scale
	for i, l := range a.Layers {
		if l.Op == model.OpConv && l.Act == model.ActSigmoid && uses[l.Name] == 1 && i+1 < len(a.Layers) {
			next := a.Layers[i+1]
			if _, shift := next.ScaleShift(); next.Op == model.OpScale && shift == 0 && len(next.Inputs) == 1 && next.Inputs[0] == l.Name {
				fused[l.Name] = true
			}
		}
	}

	for i := range a.Layers {
		l := &a.Layers[i]
		if l.Op == model.OpScale && fused[l.Inputs[0]] {
			continue // built with its head
		}
		ins := make([]*G.Node, len(l.Inputs))
		for k, name := range l.Inputs {
			n, ok := net.tensors[name]
			if !ok {
				return nil, fmt.Errorf("train: network: layer %q reads %q before it is computed", l.Name, name)
			}
			ins[k] = n
		}
		var out *G.Node
		var err error
		switch l.Op {
		case model.OpConv:
			spec := convSpec{Kernel: l.Kernel, Stride: l.Stride, Dilation: l.Dilation, Pad: l.Pad,
				Reflect: l.Padding == model.PadReflect, NoInputGrad: ins[0] == net.Input}
			w, b := net.tensors[l.Name+".weight"], net.tensors[l.Name+".bias"]
			if w == nil || b == nil {
				return nil, fmt.Errorf("train: network: layer %q has no parameters", l.Name)
			}
			name := l.Name
			if l.Act != model.ActNone {
				name += ".pre"
			}
			if out, err = nodeConv2D(name, ins[0], w, b, spec); err != nil {
				return nil, err
			}
			net.tensors[name] = out
			switch {
			case fused[l.Name]:
				next := &a.Layers[i+1]
				f, _ := next.ScaleShift()
				out, err = nodeSigmoidScale(next.Name, out, f)
			case l.Act == model.ActELU:
				out, err = nodeELU(l.Name, out)
			case l.Act == model.ActSigmoid:
				out, err = nodeSigmoidScale(l.Name, out, 1)
			case l.Act != model.ActNone:
				err = fmt.Errorf("train: network: layer %q has unknown activation %v", l.Name, l.Act)
			}
		case model.OpUpsample:
			switch l.Mode {
			case model.UpNearest:
				out, err = nodeUpsampleNearest2x(l.Name, ins[0])
			case model.UpBilinear:
				out, err = nodeUpsampleBilinear2x(l.Name, ins[0])
			default:
				err = fmt.Errorf("train: network: layer %q has unknown upsampling %v", l.Name, l.Mode)
			}
		case model.OpConcat:
			out, err = nodeConcat(l.Name, ins...)
		case model.OpScale:
			f, shift := l.ScaleShift()
			out, err = nodeScale(l.Name, ins[0], f, shift)
		case model.OpCorrelation:
			out, err = nodeCorrelation(l.Name, ins[0], ins[1], l.Disps)
		case model.OpWarp:
			out, err = nodeWarpFeatures(l.Name, ins[0], ins[1], warp.RebuildLeft)
		case model.OpAdd:
			out, err = nodeAdd(l.Name, ins[0], ins[1])
		case model.OpMatch:
			out, err = net.matchNode(l)
		case model.OpPairView:
			out, err = nodePairView(l.Name, ins[0], l.View, ins[0] != net.Input)
		default:
			err = fmt.Errorf("train: network: layer %q has unknown operation %v", l.Name, l.Op)
		}
		if err != nil {
			return nil, err
		}
		if s := out.Shape(); len(s) != 4 || s[1] != l.Out.C || s[2] != l.Out.H || s[3] != l.Out.W {
			return nil, fmt.Errorf("train: network: layer %q gives %v, the architecture says %v", l.Name, s, l.Out)
		}
		if fused[l.Name] {
			net.tensors[a.Layers[i+1].Name] = out
		} else {
			net.tensors[l.Name] = out
		}
	}
	for s, name := range a.Outputs {
		n, ok := net.tensors[name]
		if !ok {
			return nil, fmt.Errorf("train: network: output %q is not computed", name)
		}
		if a.IsStereo() {
			var err error
			if n, err = nodePackPair(name+".pair", n, batch); err != nil {
				return nil, err
			}
		}
		net.Outputs[s] = n
	}
	shareConvScratch(g)
	return net, nil
}

// Node returns the node of the tensor or parameter called name (see the
// type's documentation for names), or nil.
func (net *network) Node(name string) *G.Node { return net.tensors[name] }

// SetInput copies img, a batch of left images (Batch, 3, H, W), RGB in
// [0, 1], into the input node. It returns an error if img has the wrong
// shape or holds NaN or Inf.
func (net *network) SetInput(img *planar.Image) error {
	if net.Arch.IsStereo() {
		return fmt.Errorf("train: the network is a stereo network: give both views (SetPair)")
	}
	in := net.Arch.Input
	if err := img.CheckInput("input image", net.Batch, in.C, in.H, in.W); err != nil {
		return fmt.Errorf("train: %w", err)
	}
	copy(net.input, img.Pix)
	return nil
}

// SetWeights copies the parameters of w into the graph. It returns an
// error if w is nil, does not fit its architecture, or its architecture is
// not the network's.
func (net *network) SetWeights(w *model.Weights) error {
	if w == nil {
		return fmt.Errorf("train: weights are nil")
	}
	if err := w.Check(); err != nil {
		return fmt.Errorf("train: %w", err)
	}
	a, err := w.Arch()
	if err != nil {
		return fmt.Errorf("train: %w", err)
	}
	if a.Config.Arch != net.Arch.Config.Arch || len(a.Params) != len(net.Arch.Params) || a.Input != net.Arch.Input || a.Config.DMax != net.Arch.Config.DMax {
		return fmt.Errorf("train: weights are for a different architecture (input %v, d_max %v; the network's %v, %v)",
			a.Input, a.Config.DMax, net.Arch.Input, net.Arch.Config.DMax)
	}
	for _, p := range net.Arch.Params {
		v, ok := w.Params[p.Name]
		if !ok || len(v) != len(net.params[p.Name]) {
			return fmt.Errorf("train: weights lack %q or have the wrong length", p.Name)
		}
	}
	for name, dst := range net.params {
		copy(dst, w.Params[name])
	}
	return nil
}

// CopyWeights copies the graph's current parameters into w.Params (which
// must fit the network's architecture; missing entries are allocated).
func (net *network) CopyWeights(w *model.Weights) {
	if w.Params == nil {
		w.Params = map[string][]float32{}
	}
	for name, v := range net.params {
		w.Params[name] = append(w.Params[name][:0], v...)
	}
}
