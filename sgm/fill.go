package sgm

import (
	"github.com/parallaxdepth/parallax/depth"

	"fmt"
)

// FillHoles fills every invalid pixel of d along its row with the smaller of
// the nearest valid disparities to its left and to its right (the farther
// surface, which is what a hole beside an occluding edge usually shows), or
// with the one that exists at either end of a row; filled pixels become
// valid. A row without any valid pixel stays invalid. It returns the number
// of pixels filled, or an error if d does not pass depth.Map.Check.
//
// FillHoles is the scan-line fill of any method's output for scoring it
// densely: apply it, then ZeroHoles for rows that stayed empty, then
// depth.DisparityErrors.
func FillHoles(d *depth.Disparity) (int, error) {
	return changeRows("FillHoles", d, func(pix []float32, mask []uint8) int { return fillRow(pix, mask, 1) })
}

// ZeroHoles makes every invalid pixel of d valid with disparity 0, so that a
// score over every pixel with ground truth counts holes as disparity 0. It
// returns the number of pixels changed, or an error if d does not pass
// depth.Map.Check. The result is meant for scoring: a valid disparity of 0
// has no finite depth.
func ZeroHoles(d *depth.Disparity) (int, error) {
	return changeRows("ZeroHoles", d, func(pix []float32, mask []uint8) int {
		n := 0
		for x := range mask {
			if mask[x] == 0 {
				pix[x], mask[x] = 0, 1
				n++
			}
		}
		return n
	})
}

// changeRows checks d for fn (FillHoles, ZeroHoles) and calls change on
// each of its rows, returning the sum of the pixels change reports.
func changeRows(fn string, d *depth.Disparity, change func(pix []float32, mask []uint8) int) (int, error) {
	if d == nil {
		return 0, fmt.Errorf("sgm: %s: nil disparity", fn)
	}
	if err := d.Check("disparity"); err != nil {
		return 0, fmt.Errorf("sgm: %s: %w", fn, err)
	}
	w := d.Rect.Dx()
	n := 0
	for y := range d.Rect.Dy() {
		n += change(d.Pix[y*d.Stride:y*d.Stride+w], d.Mask[y*d.Stride:y*d.Stride+w])
	}
	return n, nil
}

// fillRow fills the invalid pixels (valid[x] == 0) of one row as FillHoles
// does, setting valid to mark where it fills, and returns their number.
func fillRow(pix []float32, valid []uint8, mark uint8) int {
	n := 0
	last := -1 // the nearest valid pixel to the left
	for x := 0; x <= len(pix); x++ {
		if x < len(pix) && valid[x] == 0 {
			continue
		}
		if x-last > 1 && (last >= 0 || x < len(pix)) {
			var v float32
			switch {
			case last < 0:
				v = pix[x]
			case x == len(pix):
				v = pix[last]
			default:
				v = min(pix[last], pix[x])
			}
			for i := last + 1; i < x; i++ {
				pix[i], valid[i] = v, mark
			}
			n += x - last - 1
		}
		last = x
	}
	return n
}
