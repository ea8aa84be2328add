package train

import (
	"fmt"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// graphObjective is the self-supervised stereo objective (loss.Objective) as
// one graph node. Its inputs are the predicted disparities, one node per
// scale of shape (N, 2, H/2^s, W/2^s) with channel 0 the left view's d_L
// and channel 1 the right view's d_R; the left and right images are
// constants of the op, set before each run with SetImages. One run of the
// node evaluates loss.Objective.Eval once, value and gradients together;
// the gradient nodes built by gorgonia's Grad return those gradients times
// the upstream value, so no formula is implemented twice.
//
// After each run Terms and PerScale return the weighted terms for logging.
type graphObjective struct {
	kernel loss.Objective
	shapes []loss.Shape // per scale, C = 3

	left, right [][]float32
	dl, dr      [][]float32
	gl, gr      [][]float32
	grads       [][]float32 // per scale, (N, 2, Hs, Ws)
	scales      []loss.Scale
	dgrads      []loss.DispGrad

	terms    loss.Terms
	perScale []loss.Terms
	ready    bool
	cost     *G.Node
}

// newGraphObjective adds the objective over disps (scale 0, the finest,
// first; each half the resolution of the one before) to their graph as a
// scalar node called name, and returns it. A nil opts means the defaults.
// It returns an error if opts is out of range (see
// loss.ObjectiveOptions.Validate), disps is empty, a
// node is not (N, 2, H/2^s, W/2^s), or the finest resolution cannot be
// halved len(disps)−1 times.
func newGraphObjective(name string, disps []*G.Node, opts *loss.ObjectiveOptions) (*graphObjective, error) {
	if len(disps) == 0 {
		return nil, fmt.Errorf("train: objective %q: no disparities", name)
	}
	o := &graphObjective{}
	if err := opts.Validate(); err != nil {
		return nil, fmt.Errorf("train: %w", err)
	}
	if opts != nil {
		c := *opts
		o.kernel.Options = &c
	}
	S := len(disps)
	in := make([]tensor.Shape, S)
	var n, h, w int
	for s, d := range disps {
		ni, ci, hi, wi, err := shape4("objective "+name, d)
		if err != nil {
			return nil, err
		}
		if s == 0 {
			n, h, w = ni, hi, wi
		}
		if ci != 2 || ni != n || hi != h>>s || wi != w>>s || hi<<s != h || wi<<s != w {
			return nil, fmt.Errorf("train: objective %q: scale %d disparity %q has shape %v, want (%d, 2, %d, %d)", name, s, d.Name(), d.Shape(), n, h>>s, w>>s)
		}
		in[s] = tensor.Shape{n, 2, hi, wi}
		sh := loss.Shape{N: n, C: 3, H: hi, W: wi}
		o.shapes = append(o.shapes, sh)
		np := n * hi * wi
		o.left = append(o.left, make([]float32, 3*np))
		o.right = append(o.right, make([]float32, 3*np))
		o.dl = append(o.dl, make([]float32, np))
		o.dr = append(o.dr, make([]float32, np))
		o.gl = append(o.gl, make([]float32, np))
		o.gr = append(o.gr, make([]float32, np))
		o.grads = append(o.grads, make([]float32, 2*np))
	}
	o.scales = make([]loss.Scale, S)
	o.dgrads = make([]loss.DispGrad, S)
	o.perScale = make([]loss.Terms, S)

	op := newKernelOp("objective", name, fmt.Sprintf("%+v", o.kernel.Options), tensor.ScalarShape(), in...)
	op.run = o.eval
	op.diff = make([]bool, S)
	for i := range op.diff {
		op.diff[i] = true
	}
	op.grad = func(inputs G.Nodes, output, grad *G.Node) (G.Nodes, error) {
		grads := make(G.Nodes, S)
		for s := range S {
			d := newKernelOp("objective.d", name, fmt.Sprintf("scale %d", s), in[s], in[s], tensor.ScalarShape(), tensor.ScalarShape())
			d.run = func(p cpu.Procs, out []float32, in [][]float32) error {
				g := in[2][0]
				for i, v := range o.grads[s] {
					out[i] = g * v
				}
				return nil
			}
			var err error
			// The cost node is an input so that this runs after the
			// forward pass that fills o.grads.
			if grads[s], err = apply(d, fmt.Sprintf("%s.d%s", name, inputs[s].Name()), inputs[s], output, grad); err != nil {
				return nil, err
			}
		}
		return grads, nil
	}
	cost, err := apply(op, name, disps...)
	if err != nil {
		return nil, err
	}
	o.cost = cost
	return o, nil
}

// Cost returns the scalar node of the objective, for gorgonia's Grad.
func (o *graphObjective) Cost() *G.Node { return o.cost }

// SetImages sets the left and right images of the next runs: (N, 3, H, W)
// at the finest disparity resolution, RGB in [0, 1]. The values are copied
// and the coarser scales are made by 2×2 area averaging
// (loss.Downsample2). It returns an error if an image is missing, has the
// wrong shape or holds NaN or Inf.
func (o *graphObjective) SetImages(left, right *planar.Image) error {
	s0 := o.shapes[0]
	if err := planar.CheckPair(left, right, s0.N, 3, s0.H, s0.W); err != nil {
		return fmt.Errorf("train: objective: %w", err)
	}
	copy(o.left[0], left.Pix)
	copy(o.right[0], right.Pix)
	for s := 1; s < len(o.shapes); s++ {
		loss.Downsample2(o.left[s], o.left[s-1], o.shapes[s-1])
		loss.Downsample2(o.right[s], o.right[s-1], o.shapes[s-1])
	}
	o.ready = true
	return nil
}

// eval is the forward pass: split each disparity tensor into the left and
// right maps, run the loss kernel, and keep its gradients in the layout of
// the inputs.
func (o *graphObjective) eval(_ cpu.Procs, out []float32, in [][]float32) error {
	if !o.ready {
		return fmt.Errorf("train: objective: SetImages was not called")
	}
	for s, sh := range o.shapes {
		plane := sh.H * sh.W
		for n := range sh.N {
			copy(o.dl[s][n*plane:(n+1)*plane], in[s][(2*n)*plane:(2*n+1)*plane])
			copy(o.dr[s][n*plane:(n+1)*plane], in[s][(2*n+1)*plane:(2*n+2)*plane])
		}
		o.scales[s] = loss.Scale{Left: o.left[s], Right: o.right[s], DispL: o.dl[s], DispR: o.dr[s], Shape: sh}
		o.dgrads[s] = loss.DispGrad{DispL: o.gl[s], DispR: o.gr[s]}
	}
	o.terms = o.kernel.Eval(o.perScale, o.dgrads, o.scales)
	for s, sh := range o.shapes {
		plane := sh.H * sh.W
		for n := range sh.N {
			copy(o.grads[s][(2*n)*plane:(2*n+1)*plane], o.gl[s][n*plane:(n+1)*plane])
			copy(o.grads[s][(2*n+1)*plane:(2*n+2)*plane], o.gr[s][n*plane:(n+1)*plane])
		}
	}
	out[0] = float32(o.terms.Total)
	return nil
}

// Terms returns the weighted terms of the last run; Total is the cost.
func (o *graphObjective) Terms() loss.Terms { return o.terms }

// PerScale returns the weighted terms of each scale in the last run, finest
// first, in a new slice.
func (o *graphObjective) PerScale() []loss.Terms { return append([]loss.Terms(nil), o.perScale...) }

// Disparity returns the left and right disparity maps of scale s (N·Hs·Ws
// values each) that the last run evaluated. They are the op's own copies,
// valid until the next run; unlike the values bound to graph nodes they
// are never reused by gorgonia. It panics if s is out of range.
func (o *graphObjective) Disparity(s int) (left, right []float32) { return o.dl[s], o.dr[s] }
