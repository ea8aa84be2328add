package loss

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/warp"
)

// ObjectiveOptions are the weights and settings of the combined objective.
// A nil *ObjectiveOptions means the defaults, and so does each zero field:
// ObjectiveOptions{} is DefaultObjectiveOptions(). A weight (and Alpha) set
// to TermOff is 0: it switches its term (the SSIM share) off.
type ObjectiveOptions struct {
	// Appearance weights the photometric appearance term of both views.
	// If 0 it is defaulted to 1.
	Appearance float64
	// Smoothness weights the edge-aware smoothness of both disparities at
	// the finest scale; scale s (0 = finest) uses Smoothness / 2^s, because
	// a disparity step spans 2^s times fewer pixels there. If 0 it is
	// defaulted to 0.1.
	Smoothness float64
	// Consistency weights the left-right consistency term. If 0 it is
	// defaulted to 1.
	Consistency float64
	// Alpha is the SSIM share α of the appearance term, in (0, 1]; TermOff
	// gives L1 only. If 0 it is defaulted to DefaultAlpha (0.85).
	Alpha float64
	// RawSmoothness, if true, applies the smoothness term to the
	// disparities as they are. By default each disparity is divided by its
	// per-image mean first, so that the term does not reward shrinking the
	// disparities.
	RawSmoothness bool
	// Border is the warp border mode for the reconstructions and the
	// consistency term; the zero value is warp.Zero. Pixels whose sample
	// falls outside the source are excluded by the warp's mask either way.
	Border warp.Border
}

// TermOff, as a weight of ObjectiveOptions or as its Alpha, stands for 0,
// which the zero value cannot say (a zero field means its default).
const TermOff = -1.0

// DefaultObjectiveOptions returns the defaults, written out: appearance 1,
// smoothness 0.1 (halved at each coarser scale), consistency 1, α = 0.85,
// smoothness on mean-normalised disparity, warp.Zero borders. These weights
// are our choice, in line with common practice for self-supervised stereo.
func DefaultObjectiveOptions() ObjectiveOptions {
	return ObjectiveOptions{
		Appearance:  1,
		Smoothness:  0.1,
		Consistency: 1,
		Alpha:       DefaultAlpha,
		Border:      warp.Zero,
	}
}

// resolved returns the options in effect: the defaults for nil and for
// every zero field, 0 for every TermOff. Other values are kept, so that
// EvalObjective can refuse them.
func (o *ObjectiveOptions) resolved() ObjectiveOptions {
	def := DefaultObjectiveOptions()
	if o == nil {
		return def
	}
	r := *o
	for _, f := range []struct{ v, def *float64 }{
		{&r.Appearance, &def.Appearance}, {&r.Smoothness, &def.Smoothness},
		{&r.Consistency, &def.Consistency}, {&r.Alpha, &def.Alpha},
	} {
		switch *f.v {
		case 0:
			*f.v = *f.def
		case TermOff:
			*f.v = 0
		}
	}
	return r
}

// Validate returns an error naming the first option of o that is out of
// range: a weight that is negative (other than TermOff) or not finite, an Alpha
// outside (0, 1] that is not TermOff, or an unknown Border. A nil o is valid.
func (o *ObjectiveOptions) Validate() error {
	r := o.resolved()
	for _, w := range []struct {
		name string
		v    float64
	}{{"appearance weight", r.Appearance}, {"smoothness weight", r.Smoothness}, {"consistency weight", r.Consistency}} {
		if !(w.v >= 0) || math.IsInf(w.v, 0) {
			return fmt.Errorf("loss: objective: %s %v must be finite and positive, or TermOff", w.name, w.v)
		}
	}
	if !(r.Alpha >= 0 && r.Alpha <= 1) {
		return fmt.Errorf("loss: objective: alpha %v is outside (0, 1] and not TermOff", r.Alpha)
	}
	if r.Border != warp.Zero && r.Border != warp.Clamp {
		return fmt.Errorf("loss: objective: unknown border mode %v", r.Border)
	}
	return nil
}

// Scale is one scale of the objective: the left and right images (N*C*H*W
// values each) and the left and right disparities (N*H*W values each), all
// at the resolution given by Shape. The caller decides how a scale is made:
// images downsampled to the disparity's resolution (see Pyramid and
// Downsample2), or coarse disparities upsampled to the image's.
type Scale struct {
	Left, Right  []float32
	DispL, DispR []float32
	Shape        Shape
}

// DispGrad receives the gradient of the objective with respect to one
// scale's disparities (N*H*W values each, overwritten; nil to skip).
type DispGrad struct {
	DispL, DispR []float32
}

// Terms holds the weighted contributions of each term to the objective, so
// that training can log them; Total is their sum.
type Terms struct {
	Appearance, Smoothness, Consistency, Total float64
}

func (t *Terms) add(o Terms) {
	t.Appearance += o.Appearance
	t.Smoothness += o.Smoothness
	t.Consistency += o.Consistency
	t.Total += o.Total
}

// Objective is the multi-scale self-supervised stereo objective. With S
// scales and weights wa, ws, wc (ObjectiveOptions) it is
//
//	(1/S) Σ_s [ wa·(A(I_L, Î_L; m_L) + A(I_R, Î_R; m_R))
//	          + (ws/2^s)·(Sm(d_L, I_L) + Sm(d_R, I_R))
//	          + wc·LR(d_L, d_R) ]
//
// where Î_L = warp(I_R by d_L, RebuildLeft) with validity m_L, Î_R =
// warp(I_L by d_R, RebuildRight) with validity m_R, A is AppearanceKernel,
// Sm is SmoothnessKernel and LR is ConsistencyKernel. Averaging over the
// scales keeps the magnitude independent of their number. The zero value
// uses the default options and is ready to use.
type Objective struct {
	// Options are the weights and settings; nil means the defaults.
	Options *ObjectiveOptions

	app   AppearanceKernel
	smo   SmoothnessKernel
	con   ConsistencyKernel
	rec   []float32
	mask  []float32
	grec  []float32
	gtmp  []float32
	gtmp2 []float32
}

// Eval returns the weighted terms of the objective over scales (scale 0 is
// the finest) and, if grads is not nil, writes the gradient with respect to
// every disparity into grads (one DispGrad per scale; a nil slice inside
// skips that gradient). If perScale is not nil it receives the weighted
// terms of each scale; they sum to the returned totals. Eval does not
// allocate in steady state. It panics if grads or perScale is not nil and
// has a length other than len(scales), if a slice length does not match
// its scale's Shape, or if Options.Border is not a defined warp.Border (as
// warp.Forward does); EvalObjective checks all of these and returns errors.
func (o *Objective) Eval(perScale []Terms, grads []DispGrad, scales []Scale) Terms {
	const name = "Objective.Eval"
	if grads != nil && len(grads) != len(scales) {
		panic(fmt.Sprintf("loss.%s: %d gradients for %d scales", name, len(grads), len(scales)))
	}
	if perScale != nil && len(perScale) != len(scales) {
		panic(fmt.Sprintf("loss.%s: %d per-scale terms for %d scales", name, len(perScale), len(scales)))
	}
	opts := o.Options.resolved()
	var total Terms
	for i, sc := range scales {
		var g DispGrad
		if grads != nil {
			g = grads[i]
		}
		t := o.scale(g, sc, i, len(scales), &opts)
		if perScale != nil {
			perScale[i] = t
		}
		total.add(t)
	}
	return total
}

func (o *Objective) scale(g DispGrad, sc Scale, level, levels int, opts *ObjectiveOptions) Terms {
	const name = "Objective.Eval"
	s := sc.Shape
	checkShape(name, s)
	n := s.N * s.C * s.H * s.W
	np := s.N * s.H * s.W
	checkLen(name, "Left", sc.Left, n, s)
	checkLen(name, "Right", sc.Right, n, s)
	checkLen(name, "DispL", sc.DispL, np, s)
	checkLen(name, "DispR", sc.DispR, np, s)
	checkOptLen(name, "gradient DispL", g.DispL, np, s)
	checkOptLen(name, "gradient DispR", g.DispR, np, s)
	o.rec, o.mask = grow(o.rec, n), grow(o.mask, np)
	o.gtmp, o.gtmp2 = grow(o.gtmp, np), grow(o.gtmp2, np)
	if g.DispL != nil || g.DispR != nil {
		o.grec = grow(o.grec, n)
	}
	clear(g.DispL)
	clear(g.DispR)

	inv := 1 / float64(levels)
	fa := opts.Appearance * inv
	fs := opts.Smoothness * inv / float64(int(1)<<level)
	fc := opts.Consistency * inv
	alpha := float32(opts.Alpha)
	var t Terms

	// Both views, each rebuilt from the other by its own disparity.
	views := [2]struct {
		target, src, disp, grad []float32
		dir                     warp.Direction
	}{
		{sc.Left, sc.Right, sc.DispL, g.DispL, warp.RebuildLeft},
		{sc.Right, sc.Left, sc.DispR, g.DispR, warp.RebuildRight},
	}
	for _, v := range views {
		if fa != 0 {
			warp.Forward(o.rec, o.mask, v.src, v.disp, s, v.dir, opts.Border)
			var grec []float32
			if v.grad != nil {
				grec = o.grec
			}
			t.Appearance += fa * o.app.Eval(nil, grec, v.target, o.rec, o.mask, s, alpha)
			if v.grad != nil {
				warp.Backward(nil, o.gtmp, grec, v.src, v.disp, s, v.dir, opts.Border)
				axpy(v.grad, float32(fa), o.gtmp)
			}
		}
		if fs != 0 {
			var gs []float32
			if v.grad != nil {
				gs = o.gtmp
			}
			t.Smoothness += fs * o.smo.Eval(gs, v.disp, v.target, s, !opts.RawSmoothness)
			if v.grad != nil {
				axpy(v.grad, float32(fs), gs)
			}
		}
	}
	if fc != 0 {
		var gl, gr []float32
		if g.DispL != nil {
			gl = o.gtmp
		}
		if g.DispR != nil {
			gr = o.gtmp2
		}
		s1 := Shape{N: s.N, C: 1, H: s.H, W: s.W}
		t.Consistency = fc * o.con.Eval(gl, gr, sc.DispL, sc.DispR, s1, opts.Border)
		axpy(g.DispL, float32(fc), gl)
		axpy(g.DispR, float32(fc), gr)
	}
	t.Total = t.Appearance + t.Smoothness + t.Consistency
	return t
}

// axpy adds a·x to dst; it does nothing if either slice is nil.
func axpy(dst []float32, a float32, x []float32) {
	if dst == nil || x == nil {
		return
	}
	x = x[:len(dst)]
	for i := range dst {
		dst[i] += a * x[i]
	}
}
