package data

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/parallaxdepth/parallax/planar"
)

// Augment sets the random changes applied to training samples. The zero
// value changes nothing; DefaultAugment is the project's choice for its
// scenario. The photometric changes use the same factors for both views, so
// that the views stay consistent with each other.
type Augment struct {
	// Flip is the probability of mirroring a sample horizontally and
	// swapping its views (see the package documentation).
	Flip float64
	// Photometric is the probability of applying the gamma, brightness and
	// colour changes below to a sample (all three together).
	Photometric float64
	// Gamma is the range of the exponent applied to each value (v^γ); a zero
	// range means γ = 1.
	Gamma [2]float64
	// Brightness is the range of a factor multiplying all channels; a zero
	// range means 1.
	Brightness [2]float64
	// Colour is the range of a factor drawn separately for R, G and B; a
	// zero range means 1.
	Colour [2]float64
}

// DefaultAugment is our choice for the synthetic scenario (package synth).
// Pairs of the greenhouse and storage styles, on which the default weights
// train, come from one fixed camera: their light varies from scene to scene,
// but not their exposure, white balance or tone curve. A varied capture
// (synth.Options.Vary, as for the orchard) draws exposure log-uniform in
// [0.55, 1.6] and white balance per channel in [0.9, 1.1]. The augmentation
// stands for such a camera, measured on 100 generated pairs of each style
// (seed 1001, 256×128, left views, values in [0, 1], 5th … 95th percentile;
// training/scenario/stats.txt, from measure.sh there):
//
//   - Brightness [0.55, 1.6], the varied capture's exposure range. The
//     varied orchard pairs' mean level spans 0.51 … 1.77 times its median,
//     the fixed-camera styles' only 0.81 … 1.26 (greenhouse) and
//     0.81 … 1.20 (storage room).
//   - Colour [0.9, 1.1] per channel, the varied capture's white balance.
//     In the fixed-camera styles each channel's mean over the grey mean
//     already varies by about ±10 % with the scene (R 1.00 … 1.22,
//     G 0.98 … 1.08, B 0.76 … 0.96).
//   - Gamma [0.8, 1.25], even in log scale. v^γ scales an image's relative
//     contrast by about γ; the contrast (standard deviation over mean of the
//     grey level) spans 0.77 … 1.27 times its median in the greenhouse and
//     0.71 … 1.56 in the varied orchard; synth has no tone curve of its own,
//     so this stands for a camera's.
//   - Flip 0.5: mirroring and swapping the views is exact for a rectified
//     pair, and with even odds the border that the other view cannot see is
//     on the left and on the right equally often.
//   - Photometric 0.5: half of the samples keep the rendered appearance, so
//     the network sees the scenario's own camera as often as changed ones.
//
// The same factors apply to both views: the varied capture's gain
// difference between the cameras (up to ±6 %) is not modelled here.
var DefaultAugment = Augment{
	Flip:        0.5,
	Photometric: 0.5,
	Gamma:       [2]float64{0.8, 1.25},
	Brightness:  [2]float64{0.55, 1.6},
	Colour:      [2]float64{0.9, 1.1},
}

// Validate returns an error naming the first field out of range.
func (a *Augment) Validate() error {
	for _, p := range []struct {
		name string
		v    float64
	}{{"Flip", a.Flip}, {"Photometric", a.Photometric}} {
		if !(p.v >= 0 && p.v <= 1) {
			return fmt.Errorf("data: augment %s probability %v must be in [0, 1]", p.name, p.v)
		}
	}
	for _, r := range []struct {
		name string
		v    [2]float64
	}{{"Gamma", a.Gamma}, {"Brightness", a.Brightness}, {"Colour", a.Colour}} {
		if r.v == [2]float64{} {
			continue
		}
		if !(r.v[0] > 0 && r.v[0] <= r.v[1]) || math.IsInf(r.v[1], 0) {
			return fmt.Errorf("data: augment %s range %v must satisfy 0 < low ≤ high < ∞", r.name, r.v)
		}
	}
	return nil
}

func uniform(r *rand.Rand, rg [2]float64) float64 {
	if rg == [2]float64{} {
		return 1
	}
	return rg[0] + (rg[1]-rg[0])*r.Float64()
}

// apply changes s in place, drawing from r. It always draws the same
// number of values, so one sample's choices do not shift another's.
func (a *Augment) apply(s *Sample, r *rand.Rand) {
	flip := r.Float64() < a.Flip
	photo := r.Float64() < a.Photometric
	gamma := uniform(r, a.Gamma)
	bright := uniform(r, a.Brightness)
	var colour [3]float64
	for c := range colour {
		colour[c] = uniform(r, a.Colour)
	}
	if flip {
		FlipSwap(s)
	}
	if photo {
		for _, im := range []*planar.Image{s.Left, s.Right} {
			photometric(im, float32(gamma), float32(bright), colour)
		}
	}
}

// photometric sets each value v of channel c to clamp(v^γ · b · colour[c], 0, 1).
func photometric(im *planar.Image, gamma, bright float32, colour [3]float64) {
	plane := im.H * im.W
	for n := 0; n < im.N; n++ {
		for c := 0; c < im.C; c++ {
			f := bright * float32(colour[c%3])
			p := im.Pix[(n*im.C+c)*plane : (n*im.C+c+1)*plane]
			for i, v := range p {
				if gamma != 1 && v > 0 {
					v = float32(math.Pow(float64(v), float64(gamma)))
				}
				p[i] = min(max(v*f, 0), 1)
			}
		}
	}
}

// FlipSwap mirrors s horizontally and swaps its views: the mirrored right
// image becomes the left image and the mirrored left image the right one;
// the mirrored right disparity becomes the left disparity and vice versa,
// and so do the occlusion maps. A point at left column x with left
// disparity d (right column x − d·W) appears after the swap at left column
// W−1−(x−d·W) with disparity d and right column W−1−x, so disparities stay
// positive and consistent. Depth, known only for the original left view, is
// dropped.
func FlipSwap(s *Sample) {
	l, r := mirror(s.Left), mirror(s.Right)
	s.Left, s.Right = r, l
	s.DispLeft, s.DispRight = mirror(s.DispRight), mirror(s.DispLeft)
	s.OccLeft, s.OccRight = mirror(s.OccRight), mirror(s.OccLeft)
	s.DepthLeft = nil
	s.Flipped = !s.Flipped
}

// mirror reverses every row of im in place and returns it; nil stays nil.
func mirror(im *planar.Image) *planar.Image {
	if im == nil {
		return nil
	}
	for o := 0; o < len(im.Pix); o += im.W {
		row := im.Pix[o : o+im.W]
		for i, j := 0, len(row)-1; i < j; i, j = i+1, j-1 {
			row[i], row[j] = row[j], row[i]
		}
	}
	return im
}
