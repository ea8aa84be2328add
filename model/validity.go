package model

import (
	"github.com/parallaxdepth/parallax/depth"
)

// The validity rules Estimate applies after the maps are built at the
// input's resolution. A pixel that fails one is invalid in every map that
// describes depth (Disparity and Depth: mask 0, value 0), so every file
// written from them drops it the same way; Confidence keeps its value, so
// a caller can see why.

// applyValidity applies the validity rules to est, whose Disparity is
// filled and whose Depth is set when the Estimator has a rig:
//
//   - Range: with a rig, a pixel whose depth lies outside the rig's range of
//     interest [MinDepth, MaxDepth] (depth.Rig.MaskRange) is invalid.
func (e *Estimator) applyValidity(est *Estimate) { applyValidity(est) }

// applyValidity is Estimator.applyValidity, for Estimate.SetRig too.
func applyValidity(est *Estimate) {
	if est.Depth == nil || est.Rig == nil {
		return
	}
	est.Rig.MaskRange(est.Depth)
	invalidateWhere(&est.Disparity.Map, &est.Depth.Map)
}

// invalidateWhere marks invalid every pixel of dst that is invalid in
// src; the two maps have the same bounds.
func invalidateWhere(dst, src *depth.Map) {
	w, h := dst.Rect.Dx(), dst.Rect.Dy()
	for y := range h {
		dp, dm := dst.Pix[y*dst.Stride:y*dst.Stride+w], dst.Mask[y*dst.Stride:y*dst.Stride+w]
		sm := src.Mask[y*src.Stride : y*src.Stride+w]
		for x := range dm {
			if sm[x] == 0 {
				dp[x], dm[x] = 0, 0
			}
		}
	}
}
