package depth

import (
	"image"
	"image/color"
	"image/draw"
	"math"
	"strconv"

	"github.com/parallaxdepth/parallax/internal/label"
)

// The colour maps of this package carry a scale bar: a band of
// ScaleBarHeight pixels under the map with the colour ramp, tick values and
// the unit, drawn by internal/label (the 7×13 bitmap face of
// golang.org/x/image/font/basicfont, public-domain X11 misc-fixed). ColorOptions.NoScaleBar leaves
// it out, so the image has the map's bounds.

// ScaleBarHeight is the height in pixels of the band a scale bar adds under
// a colour map.
const ScaleBarHeight = 32

// minScaleBarWidth is the narrowest map that gets a bar: narrower, the
// labels would not fit.
const minScaleBarWidth = 64

// scaleBar describes the ramp of a colour map.
type scaleBar struct {
	scheme Cubehelix
	// lambda0 and lambda1 are the values at the dark (λ = 0) and bright
	// (λ = 1) ends.
	at0, at1 float64
	// inverse: λ is linear in 1/value (an inverse-depth map labelled in
	// metres).
	inverse bool
	unit    string
}

// value returns the value shown at fraction lambda of the ramp.
func (s scaleBar) value(lambda float64) float64 {
	if s.inverse {
		return 1 / (1/s.at0 + lambda*(1/s.at1-1/s.at0))
	}
	return s.at0 + lambda*(s.at1-s.at0)
}

// withScaleBar returns img with the bar drawn below it (a new image whose
// bounds extend img's by ScaleBarHeight rows), or img itself if it is too
// narrow.
func withScaleBar(img *image.NRGBA, s scaleBar) *image.NRGBA {
	r := img.Rect
	if r.Dx() < minScaleBarWidth {
		return img
	}
	out := image.NewNRGBA(image.Rect(r.Min.X, r.Min.Y, r.Max.X, r.Max.Y+ScaleBarHeight))
	draw.Draw(out, r, img, r.Min, draw.Src)
	band := image.Rect(r.Min.X, r.Max.Y, r.Max.X, r.Max.Y+ScaleBarHeight)
	draw.Draw(out, band, image.NewUniform(color.NRGBA{32, 32, 32, 255}), image.Point{}, draw.Src)
	unitW := label.Width(s.unit)
	x0, x1 := r.Min.X+6, r.Max.X-10-unitW // the ramp, leaving room for the unit
	if x1-x0 < 24 {
		x1 = r.Max.X - 6
	}
	rampTop := r.Max.Y + 3
	for x := x0; x < x1; x++ {
		c := s.scheme.Color(float64(x-x0) / float64(max(x1-x0-1, 1)))
		for y := rampTop; y < rampTop+8; y++ {
			out.SetNRGBA(x, y, c)
		}
	}
	white := color.NRGBA{255, 255, 255, 255}
	ticks := min(5, max(2, (x1-x0)/56+1))
	labels := make([]float64, ticks)
	for i := range labels {
		labels[i] = s.value(float64(i) / float64(ticks-1))
	}
	prec := labelPrecision(labels)
	baseline := r.Max.Y + ScaleBarHeight - 6
	for i, v := range labels {
		x := x0 + int(math.Round(float64(i)/float64(ticks-1)*float64(x1-x0-1)))
		for y := rampTop + 8; y < rampTop+11; y++ {
			out.SetNRGBA(x, y, color.NRGBA{255, 255, 255, 255})
		}
		align := label.Center
		if i == 0 {
			align = label.Left
		} else if i == ticks-1 {
			align = label.Right
		}
		label.Draw(out, strconv.FormatFloat(v, 'f', prec, 64), x, baseline, align, white)
	}
	if s.unit != "" {
		label.Draw(out, s.unit, r.Max.X-4, baseline, label.Right, white)
	}
	return out
}

// labelPrecision returns the decimals that tell the labels apart, at most
// 3.
func labelPrecision(v []float64) int {
	step := math.Inf(1)
	for i := 1; i < len(v); i++ {
		step = math.Min(step, math.Abs(v[i]-v[i-1]))
	}
	for p := 0; p < 3; p++ {
		if step >= 2*math.Pow(10, -float64(p)) {
			return p
		}
	}
	return 3
}
