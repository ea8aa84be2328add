package model

import (
	"errors"
	"fmt"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// Net runs the network on the CPU, without a training graph, for batches of
// a fixed size. It walks the Arch's layer list with the kernels of package
// cpu. A Net made by NewNet keeps only the activations still needed: tensors
// share buffers by a liveness plan over the layer list (liveness.go), and
// its convolutions hold no gradient workspaces. Forward does not allocate
// after the first call. A Net is not safe for concurrent use; its kernels
// use several goroutines themselves.
type Net struct {
	arch  *Arch
	n     int         // images (or pairs) per call
	nb    int         // batch the layers run on: n, or 2n for a stereo network
	bufs  [][]float32 // by tensor index; bufs[0] is the input
	index map[string]int
	steps []step
	outs  [Scales]*planar.Image

	// stereo: the input [left; right], the raw one-channel outputs and
	// the classical matcher's estimate.
	pair  []float32
	raw   [Scales][]float32
	match *Matching
	// matchFixed, if set (tests only), replaces the OpMatch layers'
	// outputs, in layer order.
	matchFixed [][]float32

	keepAll bool // NewInspectNet: a buffer per tensor
}

type step struct {
	layer  *Layer
	out    int
	in     []int
	in0    TensorShape // shape of the first input
	conv   *cpu.Conv2D
	warp   warp.Shape
	level  int // OpMatch
	nth    int // OpMatch: its index among the match layers
	weight []float32
	bias   []float32
	srcs   [][]float32 // concat: filled from bufs on every call
	chans  []int
}

// NewNet returns a Net for batches of batch images with the weights w, whose
// tensors share buffers by the liveness plan: Tensor gives only the
// outputs. It keeps references to w's parameter slices (changing them changes the
// network). It returns an error if w does not fit its architecture or the
// batch size is not positive or so large that a tensor would exceed
// planar.MaxValues values. Sizes are checked before anything is allocated:
// the input size comes from the Config in a weights file and does not change
// the file's size.
func NewNet(w *Weights, batch int) (*Net, error) { return newNet(w, batch, false) }

// setParams points the Net's convolutions at p's parameters, which must
// be for the Net's architecture at any input size (the caller checks, as
// SetWeights does). The convolutions pack their weights on every call, so
// nothing else depends on the old parameters.
func (m *Net) setParams(p *Weights) {
	for i := range m.steps {
		if s := &m.steps[i]; s.conv != nil {
			s.weight, s.bias = p.Params[s.layer.Name+".weight"], p.Params[s.layer.Name+".bias"]
		}
	}
}

// NewInspectNet is NewNet with a buffer of its own for every tensor, so
// that Tensor gives every layer's output of the last call (for tests and
// inspection; it takes several times NewNet's memory).
func NewInspectNet(w *Weights, batch int) (*Net, error) { return newNet(w, batch, true) }

func newNet(w *Weights, batch int, keepAll bool) (*Net, error) {
	if w == nil {
		return nil, errors.New("model: weights are nil")
	}
	a, err := w.Arch()
	if err != nil {
		return nil, err
	}
	if err := w.check(a); err != nil {
		return nil, err
	}
	if batch <= 0 {
		return nil, fmt.Errorf("model: batch size %d must be positive", batch)
	}
	nb := batch
	if a.IsStereo() {
		if batch > planar.MaxValues/2 {
			return nil, fmt.Errorf("model: batch size %d is too large", batch)
		}
		nb = 2 * batch
	}
	// Every tensor must be a valid planar.Image (at most planar.MaxValues
	// values); check them all by arithmetic before allocating any.
	if nb > planar.MaxValues/a.Input.Len() {
		return nil, fmt.Errorf("model: input of %d×%v values exceeds %d values", nb, a.Input, planar.MaxValues)
	}
	for i := range a.Layers {
		l := &a.Layers[i]
		if nb > planar.MaxValues/l.Out.Len() {
			return nil, fmt.Errorf("model: tensor %q of %d×%v values exceeds %d values", l.Name, nb, l.Out, planar.MaxValues)
		}
	}
	m := &Net{arch: a, n: batch, nb: nb, index: map[string]int{InputName: 0}, bufs: [][]float32{nil}, keepAll: keepAll}
	sizes := []int{0}
	if a.IsStereo() {
		m.pair = make([]float32, nb*a.Input.Len())
	}
	for i := range a.Layers {
		l := &a.Layers[i]
		s := step{layer: l, out: len(m.bufs)}
		for _, name := range l.Inputs {
			k, ok := m.index[name]
			if !ok {
				return nil, fmt.Errorf("model: layer %q reads %q before it is computed", l.Name, name)
			}
			s.in = append(s.in, k)
		}
		s.in0, _ = a.Shape(l.Inputs[0])
		m.index[l.Name] = len(m.bufs)
		m.bufs = append(m.bufs, nil)
		sizes = append(sizes, nb*l.Out.Len())
		switch l.Op {
		case OpConv:
			s.conv, err = cpu.NewConv2D(convParams(l, s.in0), nb, s.in0.H, s.in0.W)
			if err != nil {
				return nil, fmt.Errorf("model: layer %q: %w", l.Name, err)
			}
			if _, c, h, wd := s.conv.OutShape(); c != l.Out.C || h != l.Out.H || wd != l.Out.W {
				return nil, fmt.Errorf("model: layer %q: the engine gives %dx%dx%d, the architecture %v", l.Name, c, h, wd, l.Out)
			}
			s.weight, s.bias = w.Params[l.Name+".weight"], w.Params[l.Name+".bias"]
		case OpConcat:
			s.srcs = make([][]float32, len(s.in))
			for _, name := range l.Inputs {
				sh, _ := a.Shape(name)
				s.chans = append(s.chans, sh.C)
			}
		case OpCorrelation, OpWarp, OpAdd:
			if err := checkPairLayer(a, l); err != nil {
				return nil, err
			}
			s.warp = warp.Shape{N: nb, C: s.in0.C, H: s.in0.H, W: s.in0.W}
		case OpMatch:
			if l.Inputs[0] != InputName || !a.IsStereo() || (l.Out.C != 1 && l.Out.C != 2) {
				return nil, fmt.Errorf("model: layer %q: a match reads the input of a stereo network and gives 1 or 2 channels", l.Name)
			}
			ml := a.Config.MatchLevel()
			for s.level = ml; a.Input.H>>s.level > l.Out.H; s.level++ {
			}
			if a.Input.H>>s.level != l.Out.H || a.Input.W>>s.level != l.Out.W {
				return nil, fmt.Errorf("model: layer %q: %v is not the input %v at 1/2^k, k ≥ %d", l.Name, l.Out, a.Input, ml)
			}
			if m.match == nil {
				if m.match, err = NewMatching(batch, a.Input.W, a.Input.H, a.Config.DMax, ml); err != nil {
					return nil, err
				}
			}
			for _, prev := range m.steps {
				if prev.layer.Op == OpMatch {
					s.nth++
				}
			}
		case OpPairView:
			if l.View != ViewLeft && l.View != ViewRight {
				return nil, fmt.Errorf("model: layer %q has unknown view %v", l.Name, l.View)
			}
		case OpUpsample, OpScale:
		default:
			return nil, fmt.Errorf("model: layer %q has unknown operation %v", l.Name, l.Op)
		}
		m.steps = append(m.steps, s)
	}
	keep := map[int]bool{}
	for _, name := range a.Outputs {
		if k, ok := m.index[name]; ok {
			keep[k] = true
		}
	}
	m.bufs = planBuffers(m.steps, sizes, keep, keepAll)
	if !keepAll {
		shareConvScratch(m.steps)
	}
	for sc, name := range a.Outputs {
		sh, _ := a.Shape(name)
		k, ok := m.index[name]
		if !ok {
			return nil, fmt.Errorf("model: output %q is not computed", name)
		}
		if a.IsStereo() {
			m.raw[sc] = m.bufs[k]
			m.outs[sc] = planar.New(batch, 2, sh.H, sh.W)
			continue
		}
		m.outs[sc] = &planar.Image{N: batch, C: sh.C, H: sh.H, W: sh.W, Pix: m.bufs[k]}
	}
	return m, nil
}

// convParams returns the forward-only engine plan's parameters of the
// convolution l on an input of shape in0.
func convParams(l *Layer, in0 TensorShape) cpu.ConvParams {
	pad := cpu.ZeroPad
	if l.Padding == PadReflect {
		pad = cpu.ReflectPad
	}
	return cpu.ConvParams{InC: in0.C, OutC: l.Out.C, Kernel: l.Kernel, Stride: l.Stride,
		Dilation: l.Dilation, Pad: l.Pad, Padding: pad, ForwardOnly: true}
}

// Arch returns the architecture the Net runs.
func (m *Net) Arch() *Arch { return m.arch }

// Forward runs the network on img, a batch of left images (N × 3 × H × W
// with the Net's batch size and the Config's size, RGB in [0, 1]). It
// returns the disparities at the four scales (see Arch.Outputs): images
// that share the Net's buffers, overwritten by the next call. It returns an
// error if img has the wrong shape or holds NaN or Inf.
func (m *Net) Forward(img *planar.Image) ([Scales]*planar.Image, error) {
	if m.arch.IsStereo() {
		return [Scales]*planar.Image{}, errors.New("model: these are stereo weights: give both views (ForwardPair)")
	}
	in := m.arch.Input
	if err := img.CheckInput("input image", m.n, in.C, in.H, in.W); err != nil {
		return [Scales]*planar.Image{}, fmt.Errorf("model: %w", err)
	}
	if err := m.run(img.Pix); err != nil {
		return [Scales]*planar.Image{}, err
	}
	return m.outs, nil
}

func (m *Net) run(input []float32) error {
	m.bufs[0] = input
	defer func() { m.bufs[0] = nil }()
	if m.match != nil {
		m.match.Invalidate()
	}
	for i := range m.steps {
		s := &m.steps[i]
		l := s.layer
		out := m.bufs[s.out]
		x := m.bufs[s.in[0]]
		switch l.Op {
		case OpConv:
			s.conv.Forward(out, x, s.weight, s.bias)
			switch l.Act {
			case ActELU:
				cpu.ELU(out, out)
			case ActSigmoid:
				cpu.Sigmoid(out, out)
			}
		case OpUpsample:
			if l.Mode == UpBilinear {
				cpu.UpsampleBilinear2x(out, x, m.nb, s.in0.C, s.in0.H, s.in0.W)
			} else {
				cpu.UpsampleNearest2x(out, x, m.nb, s.in0.C, s.in0.H, s.in0.W)
			}
		case OpConcat:
			for k, j := range s.in {
				s.srcs[k] = m.bufs[j]
			}
			cpu.Concat(out, s.srcs, s.chans, m.nb, l.Out.H, l.Out.W)
		case OpScale:
			f, sh := l.ScaleShift()
			cpu.ScaleShift(out, x, float32(f), float32(sh))
		case OpCorrelation:
			cpu.Correlation(out, x, m.bufs[s.in[1]], m.nb, s.in0.C, s.in0.H, s.in0.W, l.Disps)
		case OpWarp:
			warp.Forward(out, nil, x, m.bufs[s.in[1]], s.warp, warp.RebuildLeft, warp.Zero)
		case OpAdd:
			cpu.Add(out, x, m.bufs[s.in[1]])
		case OpPairView:
			PairView(out, x, l.View, m.n, s.in0.C, s.in0.H, s.in0.W)
		case OpMatch:
			if m.matchFixed != nil {
				copy(out, m.matchFixed[s.nth])
				continue
			}
			if err := m.match.Compute(x); err != nil {
				return err
			}
			m.match.Pool(out, s.level, l.Out.C)
		}
	}
	return nil
}

// Tensor returns the buffer of the tensor called name from the last
// Forward call (N × C × H × W, see Arch.Shape), or nil if there is no such
// layer. Only a Net made by NewInspectNet keeps every tensor; a NewNet's
// buffers are shared, so it returns the outputs and nil for the others. It is meant for inspection and tests; the slice is overwritten by
// the next call.
func (m *Net) Tensor(name string) []float32 {
	k, ok := m.index[name]
	if !ok || m.bufs[k] == nil || !m.owns(k) {
		return nil
	}
	return m.bufs[k]
}
