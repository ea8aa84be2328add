package model

import (
	"errors"
	"fmt"

	"github.com/parallaxdepth/parallax/depth"
)

// SetRig gives est, made without a rig, the metric depth of rig, exactly as
// an Estimator with that rig would have: the rig is rescaled to the
// estimate's size with Rig.Scaled (so a rig of another aspect ratio than
// the image, beyond depth.MaxAspectChange, is refused), Depth follows from
// Disparity, and the range rule is applied (pixels outside the rig's
// depth range become invalid in both maps; the other validity rules were
// applied by Estimate). It is for callers whose pairs
// have a rig each, such as a data set of varied pairs (dataset.PairFiles.Rig),
// scored with one Estimator. It returns an error for a nil rig or
// estimate, an estimate that already has a rig, or a rig that does not fit.
func (est *Estimate) SetRig(rig *depth.Rig) error {
	if est == nil || est.Disparity == nil {
		return errors.New("model: SetRig: nil estimate")
	}
	if rig == nil {
		return errors.New("model: SetRig: nil rig")
	}
	if est.Rig != nil || est.Depth != nil {
		return errors.New("model: SetRig: the estimate already has a rig")
	}
	b := est.Disparity.Rect
	r, err := rig.Scaled(b.Dx(), b.Dy())
	if err != nil {
		return fmt.Errorf("model: %w", err)
	}
	z, err := r.DisparityToDepth(est.Disparity)
	if err != nil {
		return fmt.Errorf("model: %w", err)
	}
	est.Rig, est.Depth = r, z
	applyRange(est) // the other rules were applied by Estimate
	return nil
}
