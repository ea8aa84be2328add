package model

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/warp"
)

// FlipBlend writes into dst (h·w values, one map) the flip post-processing
// blend of orig, the left disparity predicted on an image, and mirrored,
// the left disparity (channel 0) predicted on the mirrored image and
// mirrored back, both fractions of the width w. Each pixel takes the mean of
// the two, except where one of them has no support in the other view, as
// package warp's validity mask defines it (the sample position u must lie in
// [0, w−1]):
//
//	orig lacks support at column x      if x − mirrored(x)·w < 0  → dst = mirrored
//	mirrored lacks support at column x  if x + orig(x)·w > w − 1  → dst = orig
//	both or neither                                               → dst = (orig + mirrored)/2
//
// Each prediction's support is judged with the other one's disparity,
// which does have support there: near the left border the network cannot
// see the match of orig's pixels and tends to underestimate their
// disparity, so orig's own value would hide its lack of support. The band
// that gets a single prediction is thus as wide as the disparity of the scene at
// the border, with no constant to choose. On held-out greenhouse pairs it
// scores at least as well as fixed ramps over 5–10 % of the width and
// better than a ramp over the network's d_max (figures in DEVELOPERS.md,
// "Choices and their measurements"). dst may be orig or mirrored. It
// panics if a slice does not have h·w values.
//
// Why channel 0 of the mirrored prediction: mirroring a stereo pair swaps
// the roles of the views, so the mirrored left image is the RIGHT view of
// the mirrored pair, and the disparity of its own pixels, mirrored back, is
// d_L (TestFlipRolesOnSyntheticPair checks this with exact ground truth).
// The network, which takes every input for a left view, predicts the
// disparity of its input's pixels in channel 0. Its channel 1 on the
// mirrored image describes a camera to the left of the original left one,
// so the Estimator keeps d_R from the unmirrored prediction only.
func FlipBlend(dst, orig, mirrored []float32, h, w int) {
	if h <= 0 || w <= 0 || len(dst) != h*w || len(orig) != h*w || len(mirrored) != h*w {
		panic(fmt.Sprintf("model.FlipBlend: slices of %d, %d, %d values for %dx%d", len(dst), len(orig), len(mirrored), w, h))
	}
	// float32 as in warp's sample positions, so the two masks agree.
	fw, last := float32(w), float32(w-1)
	for y := range h {
		o, m, d := orig[y*w:(y+1)*w], mirrored[y*w:(y+1)*w], dst[y*w:(y+1)*w]
		for x := range d {
			fx := float32(x)
			origBlind := fx-float32(m[x]*fw) < 0 // rounded first: a fused multiply-add (arm64) would move the edge
			mirrBlind := fx+float32(o[x]*fw) > last
			switch {
			case origBlind && !mirrBlind:
				d[x] = m[x]
			case mirrBlind && !origBlind:
				d[x] = o[x]
			default:
				d[x] = (o[x] + m[x]) / 2
			}
		}
	}
}

// LRConfidence writes into conf (h·w values) the left-right agreement of
// the two disparities a network predicts for one image, left (d_L) and
// right (d_R), fractions of the width w. The right disparity is sampled
// where each left pixel lands in the right view, d̃_R(x) = d_R(x − d_L(x)·w)
// (linear interpolation, package warp's RebuildLeft), and
//
//	conf(x) = exp(−|d_L(x) − d̃_R(x)|·w / τ)
//
// with τ in pixels at width w; conf is 0 where x − d_L(x)·w falls outside
// the right view (no support). A pixel whose two predictions disagree by τ
// pixels gets 1/e ≈ 0.37. warped and valid are scratch buffers of h·w
// values, overwritten. It panics if a slice does not have h·w values or τ
// is not positive.
func LRConfidence(conf, warped, valid, left, right []float32, h, w int, tau float64) {
	n := h * w
	if h <= 0 || w <= 0 || len(conf) != n || len(warped) != n || len(valid) != n || len(left) != n || len(right) != n {
		panic(fmt.Sprintf("model.LRConfidence: slice lengths do not match %dx%d", w, h))
	}
	if !(tau > 0) {
		panic("model.LRConfidence: tau must be positive")
	}
	warp.Forward(warped, valid, right, left, warp.Shape{N: 1, C: 1, H: h, W: w}, warp.RebuildLeft, warp.Zero)
	k := float64(w) / tau
	for i := range conf {
		if valid[i] == 0 {
			conf[i] = 0
			continue
		}
		e := math.Abs(float64(left[i] - warped[i]))
		conf[i] = float32(math.Exp(-e * k))
	}
}

// resizeBilinear resamples the single map src (sw × sh) to dst (dw × dh)
// by linear interpolation with pixel centres at (x+½)·sw/dw − ½ (the
// convention of Rig.Scaled and x/image/draw), clamped at the borders. Equal
// sizes copy.
func resizeBilinear(dst, src []float32, sw, sh, dw, dh int) {
	if sw == dw && sh == dh {
		copy(dst, src)
		return
	}
	type tap struct {
		i0, i1 int
		a      float32
	}
	taps := func(n, sn int) []tap {
		t := make([]tap, n)
		s := float64(sn) / float64(n)
		for i := range t {
			u := (float64(i)+0.5)*s - 0.5
			u = min(max(u, 0), float64(sn-1))
			i0 := int(u)
			i1 := min(i0+1, sn-1)
			t[i] = tap{i0, i1, float32(u - float64(i0))}
		}
		return t
	}
	tx, ty := taps(dw, sw), taps(dh, sh)
	for y, ry := range ty {
		r0, r1 := src[ry.i0*sw:(ry.i0+1)*sw], src[ry.i1*sw:(ry.i1+1)*sw]
		out := dst[y*dw : (y+1)*dw]
		for x, t := range tx {
			top := r0[t.i0] + t.a*(r0[t.i1]-r0[t.i0])
			bot := r1[t.i0] + t.a*(r1[t.i1]-r1[t.i0])
			out[x] = top + ry.a*(bot-top)
		}
	}
}

// mirrorPlanes writes into dst the rows of src (rows × w) mirrored
// left-right. dst must not alias src.
func mirrorPlanes(dst, src []float32, rows, w int) {
	for y := range rows {
		s, d := src[y*w:(y+1)*w], dst[y*w:(y+1)*w]
		for x := range d {
			d[x] = s[w-1-x]
		}
	}
}
