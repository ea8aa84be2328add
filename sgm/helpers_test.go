package sgm

import (
	"image"
	"math"
	"math/rand/v2"
)

// smooth is a band-limited random grey pattern: a sum of plane waves with
// wavelengths between 3 and 24 pixels, so that it can be sampled at
// fractional positions.
type smooth struct {
	kx, ky, phase, amp []float64
	offset, scale      float64
}

func newSmooth(seed uint64) *smooth {
	r := rand.New(rand.NewPCG(seed, 15))
	s := &smooth{offset: 110, scale: 1}
	for range 24 {
		l := 3 + 21*r.Float64()
		a := 2 * math.Pi * r.Float64()
		s.kx = append(s.kx, 2*math.Pi/l*math.Cos(a))
		s.ky = append(s.ky, 2*math.Pi/l*math.Sin(a))
		s.phase = append(s.phase, 2*math.Pi*r.Float64())
		s.amp = append(s.amp, 9+9*r.Float64())
	}
	return s
}

// at returns the pattern's grey level at (x, y), in [0, 220].
func (s *smooth) at(x, y float64) float64 {
	v := 0.0
	for i := range s.kx {
		v += s.amp[i] * math.Sin(s.kx[i]*x+s.ky[i]*y+s.phase[i])
	}
	return min(max(s.offset+v*s.scale, 0), 220)
}

// render returns a w×h grey image whose pixel (x, y) is f(x, y), rounded.
func render(w, h int, f func(x, y float64) float64) *image.Gray {
	g := image.NewGray(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			g.Pix[y*g.Stride+x] = uint8(math.Round(min(max(f(float64(x), float64(y)), 0), 255)))
		}
	}
	return g
}

// plane returns a pair seeing the pattern s on a fronto-parallel plane at
// disparity d: right(x − d) = left(x).
func plane(w, h int, d float64, s *smooth) (left, right *image.Gray) {
	left = render(w, h, s.at)
	right = render(w, h, func(x, y float64) float64 { return s.at(x+d, y) })
	return left, right
}
