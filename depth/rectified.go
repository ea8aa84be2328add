package depth

import (
	"errors"
	"fmt"
	"image"
	"math"

	"github.com/parallaxdepth/parallax/planar"
)

// DefaultMaxRowShift is the vertical misalignment, in pixels, beyond which
// CheckRectified calls a pair not rectified. Matchers and the stereo
// network search along rows only: on the three greenhouse pairs of
// testdata/synth, a right view shifted down by 1 px raises package sgm's
// mean EPE (holes filled) from 0.53 to 1.55 px and its bad-3 from 3.9 to
// 15.1 % (0.51 to 1.01 px, 3.4 to 8.1 % on the storage pairs; measured once,
// not a test). VerticalShift measures injected shifts of up to 5 px within
// 0.25 px on every committed pair (TestVerticalShiftInjected).
const DefaultMaxRowShift = 1.0

// minRowMatch is the normalised correlation below which VerticalShift
// gives up: the row profiles of the two views do not resemble each other
// at any shift searched (a flat or vertically uniform scene, or two
// unrelated images).
const minRowMatch = 0.5

// RowShift is what VerticalShift measured on a pair.
type RowShift struct {
	// DY is the vertical shift of the right view against the left in
	// pixels: the right view's row y + DY shows what the left view's row y
	// shows. NaN if Found is false.
	DY float64
	// Match is the normalised correlation of the row profiles at DY, in
	// [-1, 1].
	Match float64
	// Found tells that the profiles match well enough (Match ≥ 0.5) for
	// DY to mean something.
	Found bool
}

// VerticalShift measures how far the right view of a stereo pair sits
// above or below the left, from row profiles: each view is reduced to the
// mean luma of each row (Y = 0.299 R + 0.587 G + 0.114 B), which a
// horizontal disparity leaves nearly unchanged (content moves along the
// row, only the border columns differ) and a vertical shift moves by the
// same number of rows. The profiles' first differences (which drop a gain
// or offset between the cameras' exposures) are normalised and
// cross-correlated over shifts up to maxShift rows (0: min(16, H/8)); the
// best shift is refined to a fraction of a pixel by a parabola through the
// correlation at it and its two neighbours. A rotation between the views
// shows as a shift only if it is large; it is not measured as such. It
// returns an error for nil, empty or oversized images, views of different
// sizes, or images fewer than 16 rows high.
func VerticalShift(left, right image.Image, maxShift int) (RowShift, error) {
	none := RowShift{DY: math.NaN()}
	if left == nil || right == nil {
		return none, errors.New("depth: VerticalShift: an image is nil")
	}
	lb, rb := left.Bounds(), right.Bounds()
	if lb.Size() != rb.Size() {
		return none, fmt.Errorf("depth: the left view is %dx%d and the right %dx%d: the views must have the same size", lb.Dx(), lb.Dy(), rb.Dx(), rb.Dy())
	}
	if err := planar.CheckSize(lb.Dx(), lb.Dy()); err != nil {
		return none, fmt.Errorf("depth: %w", err)
	}
	h := lb.Dy()
	if h < 16 {
		return none, fmt.Errorf("depth: VerticalShift: images %d rows high are too small (at least 16)", h)
	}
	if maxShift <= 0 {
		maxShift = min(16, h/8)
	}
	maxShift = min(maxShift, h/4)
	pl, pr := rowGradient(left), rowGradient(right)
	n := len(pl)
	ncc := make([]float64, 2*maxShift+1)
	best := 0
	for i := range ncc {
		s := i - maxShift
		// left row y against right row y+s, over the rows both have.
		lo, hi := max(0, -s), min(n, n-s)
		if ncc[i] = correlation(pl[lo:hi], pr[lo+s:hi+s]); math.IsNaN(ncc[i]) {
			ncc[i] = -1
		}
		if ncc[i] > ncc[best] || (ncc[i] == ncc[best] && abs(s) < abs(best-maxShift)) {
			best = i
		}
	}
	r := RowShift{DY: float64(best - maxShift), Match: ncc[best]}
	if r.Match < minRowMatch {
		return RowShift{DY: math.NaN(), Match: r.Match}, nil
	}
	if best > 0 && best < len(ncc)-1 {
		a, b, c := ncc[best-1], ncc[best], ncc[best+1]
		if den := a - 2*b + c; den < 0 {
			r.DY += max(-0.5, min(0.5, 0.5*(a-c)/den))
		}
	}
	r.Found = true
	return r, nil
}

// CheckRectified returns an error if VerticalShift finds the views of a
// pair more than maxShift pixels apart vertically (maxShift 0:
// DefaultMaxRowShift), saying by how much. A pair whose shift cannot be
// measured (RowShift.Found false) passes: the check only refuses what it
// sees. Errors of VerticalShift are returned as they are.
func CheckRectified(left, right image.Image, maxShift float64) error {
	if maxShift == 0 {
		maxShift = DefaultMaxRowShift
	}
	if !(maxShift > 0) {
		return fmt.Errorf("depth: CheckRectified: the tolerance %v px must be positive", maxShift)
	}
	r, err := VerticalShift(left, right, 0)
	if err != nil {
		return err
	}
	if r.Found && math.Abs(r.DY) > maxShift {
		return fmt.Errorf("depth: the pair is not rectified: the right view is %.1f px %s the left (row profiles, match %.2f), more than %.1f px; rectify the cameras or the images",
			math.Abs(r.DY), map[bool]string{true: "below", false: "above"}[r.DY > 0], r.Match, maxShift)
	}
	return nil
}

// rowGradient returns the first differences of img's row-mean luma
// profile, H−1 values, in 16-bit levels. The common decoded types are read
// directly, any other through At.
func rowGradient(img image.Image) []float64 {
	b := img.Bounds()
	w, h := b.Dx(), b.Dy()
	prof := make([]float64, h)
	for y := range h {
		var sum float64
		switch m := img.(type) {
		case *image.RGBA:
			row := m.Pix[m.PixOffset(b.Min.X, b.Min.Y+y):]
			for x := range w {
				sum += 0.299*float64(row[4*x]) + 0.587*float64(row[4*x+1]) + 0.114*float64(row[4*x+2])
			}
			sum *= 257
		case *image.NRGBA:
			row := m.Pix[m.PixOffset(b.Min.X, b.Min.Y+y):]
			for x := range w {
				a := float64(row[4*x+3]) / 255
				sum += a * (0.299*float64(row[4*x]) + 0.587*float64(row[4*x+1]) + 0.114*float64(row[4*x+2]))
			}
			sum *= 257
		case *image.Gray:
			row := m.Pix[m.PixOffset(b.Min.X, b.Min.Y+y):]
			for x := range w {
				sum += float64(row[x])
			}
			sum *= 257
		case *image.YCbCr: // JPEG: Y is the BT.601 luma already
			row := m.Y[m.YOffset(b.Min.X, b.Min.Y+y):]
			for x := range w {
				sum += float64(row[x])
			}
			sum *= 257
		default:
			for x := range w {
				r, g, bl, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
				sum += 0.299*float64(r) + 0.587*float64(g) + 0.114*float64(bl)
			}
		}
		prof[y] = sum / float64(w)
	}
	for y := range h - 1 {
		prof[y] = prof[y+1] - prof[y]
	}
	return prof[:h-1]
}

// correlation returns the normalised cross-correlation of a and b (equal
// lengths), NaN if either is constant.
func correlation(a, b []float64) float64 {
	n := float64(len(a))
	var ma, mb float64
	for i := range a {
		ma += a[i]
		mb += b[i]
	}
	ma /= n
	mb /= n
	var sab, saa, sbb float64
	for i := range a {
		da, db := a[i]-ma, b[i]-mb
		sab += da * db
		saa += da * da
		sbb += db * db
	}
	if saa == 0 || sbb == 0 {
		return math.NaN()
	}
	return sab / math.Sqrt(saa*sbb)
}
