package loss

import (
	"fmt"

	"github.com/parallaxdepth/parallax/warp"
)

// ConsistencyKernel computes the left-right disparity consistency of a pair
// of disparity maps and its gradient with respect to both:
//
//	LR = mean_{m_L} |d_L − warp(d_R by d_L, RebuildLeft)| + mean_{m_R} |d_R − warp(d_L by d_R, RebuildRight)|
//
// where each mean runs over the pixels the warp marks valid (m_L, m_R) and a
// term with no valid pixel is 0. The warps are warp.Forward and
// warp.Backward, so the gradient flows through both paths of each warp: the
// sampled map and the sampling disparity. The masks are constants. The
// subgradient of |·| at 0 is 0.
type ConsistencyKernel struct {
	rec, mask, gdst, gsrc, gdisp []float32
}

// Eval returns the consistency of dispL and dispR (N*H*W values each; s is
// their shape and must have C = 1) sampled with border mode b, and writes
// the gradients with respect to them into gradL and gradR (N*H*W values,
// overwritten; nil to skip). It does not allocate in steady state. It
// panics if s.C is not 1 or a slice length does not match s.
func (k *ConsistencyKernel) Eval(gradL, gradR, dispL, dispR []float32, s Shape, b warp.Border) float64 {
	const name = "ConsistencyKernel.Eval"
	checkShape(name, s)
	if s.C != 1 {
		panic(fmt.Sprintf("loss.%s: disparity shape %+v must have C = 1", name, s))
	}
	n := s.N * s.H * s.W
	checkLen(name, "dispL", dispL, n, s)
	checkLen(name, "dispR", dispR, n, s)
	checkOptLen(name, "gradL", gradL, n, s)
	checkOptLen(name, "gradR", gradR, n, s)
	k.rec, k.mask = grow(k.rec, n), grow(k.mask, n)
	wantGrad := gradL != nil || gradR != nil
	if wantGrad {
		k.gdst, k.gsrc, k.gdisp = grow(k.gdst, n), grow(k.gsrc, n), grow(k.gdisp, n)
	}
	clear(gradL)
	clear(gradR)
	// Left term: d_L against d_R sampled at d_L; the mirrored right term.
	v := k.term(gradL, gradR, dispL, dispR, s, warp.RebuildLeft, b, wantGrad)
	v += k.term(gradR, gradL, dispR, dispL, s, warp.RebuildRight, b, wantGrad)
	return v
}

// term adds to gradSelf and gradOther the gradient of
// mean |self − warp(other by self)| and returns its value.
func (k *ConsistencyKernel) term(gradSelf, gradOther, self, other []float32, s Shape, dir warp.Direction, b warp.Border, wantGrad bool) float64 {
	warp.Forward(k.rec, k.mask, other, self, s, dir, b)
	var count, sum float64
	for i, m := range k.mask {
		if m != 0 {
			count++
			e, _ := absSign(self[i]-k.rec[i], 0)
			sum += float64(e)
		}
	}
	if count == 0 {
		return 0
	}
	if !wantGrad {
		return sum / count
	}
	g := float32(1 / count)
	for i, m := range k.mask {
		_, gi := absSign(self[i]-k.rec[i], g*m)
		k.gdst[i] = -gi
		if gradSelf != nil {
			gradSelf[i] += gi
		}
	}
	var gsrc, gdisp []float32
	if gradOther != nil {
		gsrc = k.gsrc
	}
	if gradSelf != nil {
		gdisp = k.gdisp
	}
	warp.Backward(gsrc, gdisp, k.gdst, other, self, s, dir, b)
	for i := range k.gdst {
		if gradOther != nil {
			gradOther[i] += gsrc[i]
		}
		if gradSelf != nil {
			gradSelf[i] += gdisp[i]
		}
	}
	return sum / count
}
