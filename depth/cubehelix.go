package depth

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"
)

// Cubehelix is the colour scheme of D. A. Green, "A colour scheme for the
// display of astronomical intensity images", Bull. Astron. Soc. India 39, 289
// (2011). A fraction λ in [0, 1] maps to a grey level λ^γ plus a deviation in
// the plane of constant perceived brightness, which turns around the grey
// diagonal of the RGB cube as λ grows:
//
//	φ = 2π (Start/3 + Rotations·λ)
//	a = Hue · λ^γ (1 − λ^γ) / 2
//	R = λ^γ + a (−0.14861 cos φ + 1.78277 sin φ)
//	G = λ^γ + a (−0.29227 cos φ − 0.90649 sin φ)
//	B = λ^γ + a ( 1.97294 cos φ)
//
// each then clipped to [0, 1]. λ = 0 is black and λ = 1 white. As long as
// nothing clips, the brightness 0.30 R + 0.59 G + 0.11 B equals λ^γ, so it
// rises monotonically and the scheme prints as a grey ramp.
//
// The zero value is a valid scheme: with Hue 0 it is the plain grey ramp.
type Cubehelix struct {
	Start     float64 // starting colour: 1 red, 2 green, 3 (or 0) blue
	Rotations float64 // R→G→B turns from start to end; negative turns the other way
	Hue       float64 // saturation; 0 gives grey; above about 1 channels start to clip
	Gamma     float64 // exponent on λ; below 1 brightens the low end. 0 means 1
}

// DefaultCubehelix is this package's default, chosen for depth maps: from
// black it runs through dark green, olive, rose and lavender to white, and
// no channel clips, so brightness is exactly λ^0.9 (γ < 1 lifts the far,
// dark end). These parameters are our own choice, not the paper's example.
var DefaultCubehelix = Cubehelix{Start: 2.6, Rotations: -1.1, Hue: 1.1, Gamma: 0.9}

// RGB returns the colour of fraction lambda, each channel in [0, 1]. lambda
// is clamped to [0, 1]; NaN gives black.
func (c Cubehelix) RGB(lambda float64) (r, g, b float64) {
	if !(lambda > 0) {
		lambda = 0
	}
	if lambda > 1 {
		lambda = 1
	}
	gamma := c.Gamma
	if gamma == 0 {
		gamma = 1
	}
	lg := math.Pow(lambda, gamma)
	a := c.Hue * lg * (1 - lg) / 2
	phi := 2 * math.Pi * (c.Start/3 + c.Rotations*lambda)
	cs, sn := math.Cos(phi), math.Sin(phi)
	r = clip01(lg + a*(-0.14861*cs+1.78277*sn))
	g = clip01(lg + a*(-0.29227*cs-0.90649*sn))
	b = clip01(lg + a*(1.97294*cs))
	return r, g, b
}

// Color returns the colour of fraction lambda as an opaque 8-bit colour,
// each channel rounded to the nearest level.
func (c Cubehelix) Color(lambda float64) color.NRGBA {
	r, g, b := c.RGB(lambda)
	return color.NRGBA{R: to8(r), G: to8(g), B: to8(b), A: 255}
}

func clip01(v float64) float64 { return math.Min(1, math.Max(0, v)) }

func to8(v float64) uint8 { return uint8(math.Round(v * 255)) }

// ColorOptions sets how ColorDisparity and ColorDepth map values to colours.
// A nil *ColorOptions means the zero value.
type ColorOptions struct {
	// Scheme is the colour scheme; nil means DefaultCubehelix.
	Scheme *Cubehelix
	// Min and Max are the values mapped to the ends of the scheme; values
	// outside are clamped. If both are 0 the range of the map's valid values
	// is used.
	Min, Max float64
	// Unit labels the scale bar; "" means "px" for ColorDisparity and "m"
	// for ColorDepth.
	Unit string
	// NoScaleBar leaves out the scale bar (see ScaleBarHeight), so the
	// image has the map's bounds. Default false: maps at least 64 pixels
	// wide get a bar under them.
	NoScaleBar bool
}

// colorMap renders m with near (large disparity, small depth) bright;
// inverse colours 1/value linearly (depth as inverse depth).
func colorMap(m *Map, opt *ColorOptions, inverse bool, unit string) (*image.NRGBA, error) {
	if err := m.Check("map"); err != nil {
		return nil, err
	}
	var o ColorOptions
	if opt != nil {
		o = *opt
	}
	scheme := DefaultCubehelix
	if o.Scheme != nil {
		scheme = *o.Scheme
	}
	lo, hi := o.Min, o.Max
	if lo == 0 && hi == 0 {
		lo, hi = math.Inf(1), math.Inf(-1)
		pairs(m, m, func(v, _ float64) {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		})
	} else if math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0) || hi <= lo || (inverse && lo <= 0) {
		return nil, fmt.Errorf("depth: colour range [%v, %v] is invalid: want finite Min < Max (Min > 0 for depth)", lo, hi)
	}
	if o.Unit != "" {
		unit = o.Unit
	}
	bar := scaleBar{scheme: scheme, at0: lo, at1: hi, unit: unit}
	if inverse {
		// λ runs from the far end (1/hi) to the near end (1/lo).
		bar = scaleBar{scheme: scheme, at0: hi, at1: lo, inverse: true, unit: unit}
		lo, hi = 1/hi, 1/lo
	}
	img := image.NewNRGBA(m.Rect)
	w := m.Rect.Dx()
	// A 1024-entry table keeps the per-pixel cost to a lookup; the
	// quantisation (1/1023 of the range) is finer than 8-bit output needs.
	const levels = 1024
	var lut [levels]color.NRGBA
	for i := range lut {
		lut[i] = scheme.Color(float64(i) / (levels - 1))
	}
	span := hi - lo
	for y := 0; y < m.Rect.Dy(); y++ {
		row, mask := m.Pix[y*m.Stride:y*m.Stride+w], m.Mask[y*m.Stride:y*m.Stride+w]
		out := img.Pix[y*img.Stride : y*img.Stride+4*w]
		for x, v := range row {
			if mask[x] == 0 {
				continue // transparent
			}
			fv := float64(v)
			if inverse {
				fv = 1 / fv
			}
			lambda := 1.0
			if span > 0 {
				lambda = clip01((fv - lo) / span)
			}
			c := lut[int(math.Round(lambda*(levels-1)))]
			out[4*x], out[4*x+1], out[4*x+2], out[4*x+3] = c.R, c.G, c.B, c.A
		}
	}
	if o.NoScaleBar || !(bar.at0 < math.Inf(1)) || !(bar.at1 > math.Inf(-1)) {
		return img, nil
	}
	return withScaleBar(img, bar), nil
}

// ColorDisparity renders a disparity map with a colour scheme, linearly in
// disparity: the largest disparity (nearest) is the bright end, invalid
// pixels are transparent, and a scale bar in pixels sits under the map
// unless opt.NoScaleBar.
func ColorDisparity(d *Disparity, opt *ColorOptions) (*image.NRGBA, error) {
	if d == nil {
		return nil, fmt.Errorf("depth: ColorDisparity: disparity is nil")
	}
	return colorMap(&d.Map, opt, false, "px")
}

// ColorDepth renders a depth map with a colour scheme, linearly in inverse
// depth 1/Z between 1/Max and 1/Min (the same picture as ColorDisparity of
// the same scene, so a few far outliers cannot wash it out as a linear
// depth scale would): the smallest depth (nearest) is the bright end,
// invalid pixels are transparent, and a scale bar labelled in metres sits
// under the map unless opt.NoScaleBar.
func ColorDepth(z *Depth, opt *ColorOptions) (*image.NRGBA, error) {
	if z == nil {
		return nil, fmt.Errorf("depth: ColorDepth: depth is nil")
	}
	return colorMap(&z.Map, opt, true, "m")
}

// SavePNG encodes img as PNG to path, atomically; use it for the images of
// ColorDisparity and ColorDepth.
func SavePNG(path string, img image.Image) error {
	if img == nil {
		return errors.New("depth: SavePNG: image is nil")
	}
	return writeFileAtomic(path, func(w io.Writer) error {
		if err := png.Encode(w, img); err != nil {
			return fmt.Errorf("depth: writing PNG: %w", err)
		}
		return nil
	})
}
