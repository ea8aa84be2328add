package model

import (
	"errors"
	"fmt"

	"github.com/parallaxdepth/parallax/planar"
)

// checkPairLayer checks the inputs of the two-input operations.
func checkPairLayer(a *Arch, l *Layer) error {
	if len(l.Inputs) != 2 {
		return fmt.Errorf("model: layer %q (%v) needs 2 inputs, has %d", l.Name, l.Op, len(l.Inputs))
	}
	s0, _ := a.Shape(l.Inputs[0])
	s1, _ := a.Shape(l.Inputs[1])
	switch l.Op {
	case OpCorrelation:
		if s0 != s1 || l.Disps < 1 || l.Out != (TensorShape{l.Disps, s0.H, s0.W}) {
			return fmt.Errorf("model: layer %q: correlation of %v and %v over %d shifts cannot give %v", l.Name, s0, s1, l.Disps, l.Out)
		}
	case OpWarp:
		if s1 != (TensorShape{1, s0.H, s0.W}) || l.Out != s0 {
			return fmt.Errorf("model: layer %q: warp of %v by a disparity %v cannot give %v", l.Name, s0, s1, l.Out)
		}
	case OpAdd:
		if s0 != s1 || l.Out != s0 {
			return fmt.Errorf("model: layer %q: sum of %v and %v cannot give %v", l.Name, s0, s1, l.Out)
		}
	}
	return nil
}

// PairView writes one view of a stereo batch (see buildStereo): src holds
// the tensors of n left views then of their n right views (c × h × w each);
// ViewLeft writes [left; mirror(right)], ViewRight [right; mirror(left)],
// mirror reversing every row. PairViewBackward is its transpose.
func PairView(dst, src []float32, v View, n, c, h, w int) {
	k := n * c * h * w
	a, b := src[:k], src[k:2*k]
	if v == ViewRight {
		a, b = b, a
	}
	copy(dst[:k], a)
	mirrorPlanes(dst[k:2*k], b, n*c*h, w)
}

// PairViewBackward writes the gradient of PairView's input from the
// gradient of its output (overwriting dsrc).
func PairViewBackward(dsrc, ddst []float32, v View, n, c, h, w int) {
	k := n * c * h * w
	a, b := dsrc[:k], dsrc[k:2*k]
	if v == ViewRight {
		a, b = b, a
	}
	copy(a, ddst[:k])
	mirrorPlanes(b, ddst[k:2*k], n*c*h, w)
}

// PackPair turns the one-channel output of a stereo network on 2n images
// (see buildStereo) into n two-channel maps: channel 0 the first half (d_L),
// channel 1 the second half mirrored back (d_R). UnpackPair is its adjoint,
// for gradients.
func PackPair(dst, raw []float32, n, h, w int) {
	p := h * w
	for i := range n {
		copy(dst[2*i*p:(2*i+1)*p], raw[i*p:(i+1)*p])
		mirrorPlanes(dst[(2*i+1)*p:(2*i+2)*p], raw[(n+i)*p:(n+i+1)*p], h, w)
	}
}

// UnpackPair is the inverse (and the transpose) of PackPair: it writes the
// 2n one-channel maps raw from the n two-channel maps src.
func UnpackPair(raw, src []float32, n, h, w int) {
	p := h * w
	for i := range n {
		copy(raw[i*p:(i+1)*p], src[2*i*p:(2*i+1)*p])
		mirrorPlanes(raw[(n+i)*p:(n+i+1)*p], src[(2*i+1)*p:(2*i+2)*p], h, w)
	}
}

// ForwardPair runs a stereo network on a batch of rectified pairs (left,
// right: N × 3 × H × W with the Net's batch size and the Config's size, RGB
// in [0, 1]). It returns the disparities at the four scales, two channels
// each as for Forward (d_L, d_R), in images that share the Net's buffers
// and are overwritten by the next call. It returns an error for one-image
// weights, a view of the wrong shape, or NaN or Inf.
func (m *Net) ForwardPair(left, right *planar.Image) ([Scales]*planar.Image, error) {
	var none [Scales]*planar.Image
	if !m.arch.IsStereo() {
		return none, errors.New("model: these are one-image weights: give the left image alone (Forward)")
	}
	in := m.arch.Input
	if err := planar.CheckPair(left, right, m.n, in.C, in.H, in.W); err != nil {
		return none, fmt.Errorf("model: %w", err)
	}
	k := len(left.Pix)
	copy(m.pair[:k], left.Pix)
	copy(m.pair[k:], right.Pix)
	if err := m.run(m.pair); err != nil {
		return none, err
	}
	for s, o := range m.outs {
		PackPair(o.Pix, m.raw[s], m.n, o.H, o.W)
	}
	return m.outs, nil
}

// ForwardViews runs the network on whichever views its kind takes: the left
// images for one-image weights (right is ignored and may be nil), both
// views for stereo weights (ForwardPair).
func (m *Net) ForwardViews(left, right *planar.Image) ([Scales]*planar.Image, error) {
	if m.arch.IsStereo() {
		return m.ForwardPair(left, right)
	}
	return m.Forward(left)
}
