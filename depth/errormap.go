package depth

import (
	"fmt"
	"image"
	"math"
)

// ColorError renders the error of est against truth gt: |est − gt|, or
// |est − gt| / gt if relative, of the pixels valid in both, coloured with
// DefaultCubehelix over [0, top] (bright = large error, larger errors
// clamped), with a scale bar (labelled "px error" or "relative error"); other
// pixels are transparent. est and gt must have the same
// bounds and pass Map.Check; top must be positive.
func ColorError(est, gt *Map, relative bool, top float64) (*image.NRGBA, error) {
	if err := checkPair(est, gt); err != nil {
		return nil, err
	}
	if !(top > 0) {
		return nil, fmt.Errorf("depth: ColorError: top %v must be positive", top)
	}
	em, err := NewDisparity(est.Rect)
	if err != nil {
		return nil, err
	}
	for y := est.Rect.Min.Y; y < est.Rect.Max.Y; y++ {
		for x := est.Rect.Min.X; x < est.Rect.Max.X; x++ {
			a, ok1 := est.At(x, y)
			b, ok2 := gt.At(x, y)
			if !ok1 || !ok2 {
				continue
			}
			e := math.Abs(float64(a - b))
			if relative {
				e /= float64(b)
			}
			// Maps keep positive values only: an exact match gets the
			// smallest positive value, the bottom of the scale.
			em.Set(x, y, float32(max(e, 1e-30)))
		}
	}
	unit := "px"
	if relative {
		unit = "relative"
	}
	return ColorDisparity(em, &ColorOptions{Min: 0, Max: top, Unit: unit + " error"})
}
