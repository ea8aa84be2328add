package data

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/parallaxdepth/parallax/planar"
)

// Augment sets the random changes applied to training samples. The zero
// value changes nothing; DefaultAugment is a common starting point. The
// photometric changes use the same factors for both views, so that the
// views stay consistent with each other.
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

// DefaultAugment flips half of the samples and changes the colours of half
// of them within moderate ranges (our choice, in line with common practice
// for self-supervised stereo training).
var DefaultAugment = Augment{
	Flip:        0.5,
	Photometric: 0.5,
	Gamma:       [2]float64{0.8, 1.2},
	Brightness:  [2]float64{0.7, 1.4},
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
