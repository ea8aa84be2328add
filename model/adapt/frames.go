package adapt

import (
	"fmt"
	"image"
	"math"
	"slices"

	"github.com/parallaxdepth/parallax/planar"
)

// frame is one admitted pair at the training size, kept as 16-bit
// samples: three planes of H×W (R, G, B), sample u standing for u/65535,
// which is exactly what the 16-bit resize gives (planar.FromImageInto of
// an opaque *image.RGBA64). That is half the memory of float32, and the
// buffer is the adapter's largest store after the training graph.
type frame struct {
	left, right []uint16
	// The objective of the starting weights on the pair, once scored, and
	// of the weights in service number servingID (Adapter.servingID).
	startLoss, servingLoss float64
	startScored            bool
	servingID              int
}

// gate names why a pair was not admitted; gateOK admits it.
type gate int

const (
	gateOK gate = iota
	gateLowContrast
	gateDuplicate
	gateSwapped
)

// scratch is what the adapter reuses to take pairs in and to feed the
// training graph, so that neither allocates per pair or per step.
type scratch struct {
	rs          *planar.Resampler
	left, right *planar.Image // (1, 3, H, W), RGB in [0, 1]
	grey, greyR []float32     // luma of left and right
}

func newScratch(w, h int) (*scratch, error) {
	rs, err := planar.NewResampler(w, h)
	if err != nil {
		return nil, fmt.Errorf("adapt: %w", err)
	}
	return &scratch{rs: rs,
		left: planar.New(1, 3, h, w), right: planar.New(1, 3, h, w),
		grey: make([]float32, w*h), greyR: make([]float32, w*h)}, nil
}

// resize scales img to the scratch size into dst (RGB in [0, 1]),
// Catmull-Rom as in model/data (planar.Resampler: the 16-bit result of
// golang.org/x/image/draw's CatmullRom, bit for bit, without allocating).
func (s *scratch) resize(dst *planar.Image, img image.Image) error {
	if err := s.rs.Scale(dst, img); err != nil {
		return fmt.Errorf("adapt: %w", err)
	}
	return nil
}

// encode stores p's values as 16-bit samples in dst (reused if long
// enough) and returns it.
func encode(dst []uint16, p *planar.Image) []uint16 {
	dst = slices.Grow(dst[:0], len(p.Pix))[:len(p.Pix)]
	for i, v := range p.Pix {
		dst[i] = uint16(math.Round(float64(v) * 65535))
	}
	return dst
}

// decode writes the samples of src into p.
func decode(p *planar.Image, src []uint16) {
	for i, u := range src {
		p.Pix[i] = float32(u) / 65535
	}
}

// luma writes the Rec. 601 luma 0.299 R + 0.587 G + 0.114 B (common
// practice) of a (1, 3, H, W) image into g (H·W values).
func luma(g []float32, p *planar.Image) {
	n := p.H * p.W
	r, gr, b := p.Pix[:n], p.Pix[n:2*n], p.Pix[2*n:3*n]
	for i := range g[:n] {
		g[i] = 0.299*r[i] + 0.587*gr[i] + 0.114*b[i]
	}
}

// stdDev returns the standard deviation of v.
func stdDev(v []float32) float64 {
	var s, s2 float64
	for _, x := range v {
		s += float64(x)
		s2 += float64(x) * float64(x)
	}
	m := s / float64(len(v))
	return math.Sqrt(max(0, s2/float64(len(v))-m*m))
}

// meanAbsDiff returns the mean absolute difference of a and b (equal
// lengths).
func meanAbsDiff(a, b []float32) float64 {
	var s float64
	for i := range a {
		s += math.Abs(float64(a[i] - b[i]))
	}
	return s / float64(len(a))
}

// shiftError returns the mean absolute difference between the left luma
// at x and the right luma at x − s (s may be negative) over the columns
// where both exist, on every second row.
func shiftError(l, r []float32, w, h, s int) float64 {
	var sum float64
	n := 0
	for y := 0; y < h; y += 2 {
		row := y * w
		for x := max(0, s); x < min(w, w+s); x++ {
			sum += math.Abs(float64(l[row+x] - r[row+x-s]))
			n++
		}
	}
	if n == 0 {
		return math.Inf(1)
	}
	return sum / float64(n)
}

// viewsSwapped reports whether the pair fits the opposite view order
// clearly better than the stated one: a correct pair has every disparity
// positive, so the left view at x matches the right at x − d, d ≥ 0. It
// compares the best whole-image shift in [0, maxShift] with the best in
// [−maxShift, −1]; the order is called swapped when the wrong direction's
// error is below swapRatio of the right direction's. A scene far away
// (disparities near 0) fits both about equally and is kept. Our own cheap
// test, checked on synthetic drives in the tests; it cannot see a pair
// whose both views are the same image (that one has no depth signal and
// trains to disparity 0; the contrast and loss checks bound the harm).
func viewsSwapped(l, r []float32, w, h, maxShift int) bool {
	right, wrong := math.Inf(1), math.Inf(1)
	for s := 0; s <= maxShift; s++ {
		right = min(right, shiftError(l, r, w, h, s))
		if s > 0 {
			wrong = min(wrong, shiftError(l, r, w, h, -s))
		}
	}
	return wrong < swapRatio*right
}

// swapRatio: see viewsSwapped. Our choice: a clear margin, so that noise
// on a distant scene does not refuse correct pairs.
const swapRatio = 0.8
