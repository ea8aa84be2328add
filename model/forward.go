package model

import (
	"errors"
	"fmt"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
	"github.com/parallaxdepth/parallax/planar"
)

// Net runs the network on the CPU, without a training graph, for batches of
// a fixed size. It walks the Arch's layer list with the kernels of package
// cpu. A Net owns one buffer per tensor, so Forward does not allocate after
// the first call. A Net is not safe for concurrent use; its kernels use
// several goroutines themselves.
type Net struct {
	arch  *Arch
	n     int
	bufs  [][]float32 // by tensor index; bufs[0] is the caller's input
	index map[string]int
	steps []step
	outs  [Scales]*planar.Image
}

type step struct {
	layer  *Layer
	out    int
	in     []int
	in0    Shape // shape of the first input
	conv   *cpu.Conv2D
	weight []float32
	bias   []float32
	srcs   [][]float32 // concat: filled from bufs on every call
	chans  []int
}

// NewNet returns a Net for batches of batch images with the weights w. It
// keeps references to w's parameter slices (changing them changes the
// network). It returns an error if w does not fit its architecture or the
// batch size is not positive or so large that a tensor would exceed
// planar.MaxValues values. Sizes are checked before anything is allocated:
// the input size comes from the Config in a weights file and does not change
// the file's size.
func NewNet(w *Weights, batch int) (*Net, error) {
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
	// Every tensor must be a valid planar.Image (at most planar.MaxValues
	// values); check them all by arithmetic before allocating any.
	if batch > planar.MaxValues/a.Input.Len() {
		return nil, fmt.Errorf("model: input of %d×%v values exceeds %d values", batch, a.Input, planar.MaxValues)
	}
	for i := range a.Layers {
		l := &a.Layers[i]
		if batch > planar.MaxValues/l.Out.Len() {
			return nil, fmt.Errorf("model: tensor %q of %d×%v values exceeds %d values", l.Name, batch, l.Out, planar.MaxValues)
		}
	}
	m := &Net{arch: a, n: batch, index: map[string]int{InputName: 0}, bufs: [][]float32{nil}}
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
		m.bufs = append(m.bufs, make([]float32, batch*l.Out.Len()))
		switch l.Op {
		case OpConv:
			pad := cpu.ZeroPad
			if l.Padding == PadReflect {
				pad = cpu.ReflectPad
			}
			s.conv, err = cpu.NewConv2D(cpu.ConvParams{InC: s.in0.C, OutC: l.Out.C, Kernel: l.Kernel, Stride: l.Stride,
				Dilation: l.Dilation, Pad: l.Pad, Padding: pad}, batch, s.in0.H, s.in0.W)
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
		case OpUpsample, OpScale:
		default:
			return nil, fmt.Errorf("model: layer %q has unknown operation %v", l.Name, l.Op)
		}
		m.steps = append(m.steps, s)
	}
	for sc, name := range a.Outputs {
		sh, _ := a.Shape(name)
		m.outs[sc] = &planar.Image{N: batch, C: sh.C, H: sh.H, W: sh.W, Pix: m.bufs[m.index[name]]}
	}
	return m, nil
}

// Arch returns the architecture the Net runs.
func (m *Net) Arch() *Arch { return m.arch }

// Forward runs the network on img, a batch of left images (N × 3 × H × W
// with the Net's batch size and the Config's size, RGB in [0, 1]). It
// returns the disparities at the four scales (see Arch.Outputs): images
// that share the Net's buffers, overwritten by the next call. It returns an
// error if img has the wrong shape or holds NaN or Inf.
func (m *Net) Forward(img *planar.Image) ([Scales]*planar.Image, error) {
	if err := img.Check("input image"); err != nil {
		return [Scales]*planar.Image{}, fmt.Errorf("model: %w", err)
	}
	if in := m.arch.Input; img.N != m.n || img.C != in.C || img.H != in.H || img.W != in.W {
		return [Scales]*planar.Image{}, fmt.Errorf("model: input image has shape %s, the network takes %dx%dx%dx%d", img.Shape(), m.n, in.C, in.H, in.W)
	}
	if err := img.CheckFinite("input image"); err != nil {
		return [Scales]*planar.Image{}, fmt.Errorf("model: %w", err)
	}
	m.run(img.Pix)
	return m.outs, nil
}

func (m *Net) run(input []float32) {
	m.bufs[0] = input
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
				cpu.UpsampleBilinear2x(out, x, m.n, s.in0.C, s.in0.H, s.in0.W)
			} else {
				cpu.UpsampleNearest2x(out, x, m.n, s.in0.C, s.in0.H, s.in0.W)
			}
		case OpConcat:
			for k, j := range s.in {
				s.srcs[k] = m.bufs[j]
			}
			cpu.Concat(out, s.srcs, s.chans, m.n, l.Out.H, l.Out.W)
		case OpScale:
			cpu.ScaleShift(out, x, float32(l.Factor), 0)
		}
	}
	m.bufs[0] = nil
}

// Tensor returns the buffer of the tensor called name from the last
// Forward call (N × C × H × W, see Arch.Shape), or nil if there is no such
// layer. It is meant for inspection and tests; the slice is overwritten by
// the next call.
func (m *Net) Tensor(name string) []float32 {
	k, ok := m.index[name]
	if !ok || k == 0 {
		return nil
	}
	return m.bufs[k]
}
