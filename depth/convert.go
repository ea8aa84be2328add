package depth

import (
	"fmt"
	"image"
	"math"

	"github.com/parallaxdepth/parallax/planar"
)

// FractionToPixels converts a disparity expressed as a fraction of the image
// width into pixels at an image width of width pixels: frac·width.
func FractionToPixels(frac float64, width int) float64 { return frac * float64(width) }

// PixelsToFraction converts a disparity of px pixels at an image width of
// width pixels into a fraction of the width: px/width.
func PixelsToFraction(px float64, width int) float64 { return px / float64(width) }

// ScalePixels converts a disparity of px pixels at image width fromWidth into
// pixels at image width toWidth: px·toWidth/fromWidth.
func ScalePixels(px float64, fromWidth, toWidth int) float64 {
	return px * float64(toWidth) / float64(fromWidth)
}

// DepthFromPixels returns the depth in metres of a disparity of px pixels at
// the rig's width: Z = Fx·Baseline / (px + DeltaCx). ok is false, and z is
// 0, if px is not positive and finite or the depth is not positive and
// finite.
func (r *Rig) DepthFromPixels(px float64) (z float64, ok bool) {
	if !(px > 0) || math.IsInf(px, 0) {
		return 0, false
	}
	den := px + r.DeltaCx
	if !(den > 0) {
		return 0, false
	}
	z = r.Fx * r.Baseline / den
	if !(z > 0) || math.IsInf(z, 0) {
		return 0, false
	}
	return z, true
}

// PixelsFromDepth returns the disparity in pixels at the rig's width of a
// point z metres away: d = Fx·Baseline/z − DeltaCx. ok is false, and px is
// 0, if z is not positive and finite or the disparity is not positive (the
// point lies beyond the rig's range when DeltaCx > 0).
func (r *Rig) PixelsFromDepth(z float64) (px float64, ok bool) {
	if !(z > 0) || math.IsInf(z, 0) {
		return 0, false
	}
	px = r.Fx*r.Baseline/z - r.DeltaCx
	if !(px > 0) || math.IsInf(px, 0) {
		return 0, false
	}
	return px, true
}

// checkFrame returns an error unless the map bounds lie inside the rig's
// image, whose pixel coordinates the map uses.
func (r *Rig) checkFrame(m *Map, what string) error {
	if err := r.Validate(); err != nil {
		return err
	}
	if err := m.Check(what); err != nil {
		return err
	}
	if !m.Rect.In(image.Rect(0, 0, r.Width, r.Height)) {
		return fmt.Errorf("depth: %s bounds %v lie outside the rig's %dx%d image; rescale the rig with Scaled", what, m.Rect, r.Width, r.Height)
	}
	return nil
}

// DisparityToDepth converts a disparity map in pixels to metric depth with
// DepthFromPixels. The map's coordinates are those of the rig's image: its
// bounds must lie inside (0, 0)–(Width, Height); use Scaled for a map at
// another resolution. Invalid or unconvertible pixels are invalid in the
// result.
func (r *Rig) DisparityToDepth(d *Disparity) (*Depth, error) {
	if d == nil {
		return nil, fmt.Errorf("depth: DisparityToDepth: disparity is nil")
	}
	return convertMap[Depth](r, &d.Map, "disparity", r.DepthFromPixels)
}

// DepthToDisparity converts a depth map in metres to disparity in pixels at
// the rig's width with PixelsFromDepth, under the same frame rule as
// DisparityToDepth.
func (r *Rig) DepthToDisparity(z *Depth) (*Disparity, error) {
	if z == nil {
		return nil, fmt.Errorf("depth: DepthToDisparity: depth is nil")
	}
	return convertMap[Disparity](r, &z.Map, "depth", r.PixelsFromDepth)
}

// convertMap is DisparityToDepth and DepthToDisparity: after the frame
// check of src (named what), each valid pixel v of src becomes convert(v),
// valid where convert succeeds and the result stays positive and finite as
// a float32.
func convertMap[T Disparity | Depth](r *Rig, src *Map, what string, convert func(float64) (float64, bool)) (*T, error) {
	if err := r.checkFrame(src, what); err != nil {
		return nil, err
	}
	dst, err := newMap(src.Rect)
	if err != nil {
		return nil, err
	}
	w := src.Rect.Dx()
	for y := 0; y < src.Rect.Dy(); y++ {
		in, mask := src.Pix[y*src.Stride:y*src.Stride+w], src.Mask[y*src.Stride:y*src.Stride+w]
		out, outMask := dst.Pix[y*w:(y+1)*w], dst.Mask[y*w:(y+1)*w]
		for x, v := range in {
			if mask[x] == 0 {
				continue
			}
			if c, ok := convert(float64(v)); ok && c <= math.MaxFloat32 && float32(c) > 0 {
				out[x], outMask[x] = float32(c), 1
			}
		}
	}
	return &T{dst}, nil
}

// MaskRange marks invalid every pixel of z outside the rig's depth range of
// interest [MinDepth, MaxDepth]. A nil z is left alone; r must not be nil.
func (r *Rig) MaskRange(z *Depth) {
	if z == nil {
		return
	}
	w := z.Rect.Dx()
	lo, hi := float32(r.MinDepth), float32(r.MaxDepth)
	for y := 0; y < z.Rect.Dy(); y++ {
		row, mask := z.Pix[y*z.Stride:y*z.Stride+w], z.Mask[y*z.Stride:y*z.Stride+w]
		for x, v := range row {
			if mask[x] != 0 && (v < lo || v > hi) {
				row[x], mask[x] = 0, 0
			}
		}
	}
}

// DisparityFromFraction converts image n of a batch of single-channel
// disparities expressed as fractions of the width (the network's output)
// into a disparity map in pixels at the batch's resolution, bounds
// (0, 0)–(W, H). Values that are not positive and finite become invalid
// pixels. It returns an error if im is malformed, has more than one channel,
// or n is out of range.
func DisparityFromFraction(im *planar.Image, n int) (*Disparity, error) {
	if err := im.Check("disparity"); err != nil {
		return nil, fmt.Errorf("depth: %w", err)
	}
	if im.C != 1 {
		return nil, fmt.Errorf("depth: DisparityFromFraction: disparity has %d channels, want 1", im.C)
	}
	if n < 0 || n >= im.N {
		return nil, fmt.Errorf("depth: DisparityFromFraction: image %d out of range [0, %d)", n, im.N)
	}
	d, err := NewDisparity(image.Rect(0, 0, im.W, im.H))
	if err != nil {
		return nil, err
	}
	src := im.Pix[n*im.H*im.W : (n+1)*im.H*im.W]
	w := float64(im.W)
	for i, f := range src {
		px := float64(f) * w
		if px > 0 && px <= math.MaxFloat32 {
			d.Pix[i], d.Mask[i] = float32(px), 1
		}
	}
	return d, nil
}

// Fraction returns d as fractions of an image width of width pixels (the
// width of the full image d refers to: d.Rect.Dx() for a whole map),
// row-major over d.Rect, with a mask of 1 (valid) and 0 (invalid) as
// float32: the layout of a planar.Image with N = C = 1. Invalid pixels are 0.
// Fraction panics if width is not positive.
func (d *Disparity) Fraction(width int) (frac, mask []float32) {
	if width <= 0 {
		panic("depth: Fraction: width must be positive")
	}
	w, h := d.Rect.Dx(), d.Rect.Dy()
	frac, mask = make([]float32, w*h), make([]float32, w*h)
	inv := 1 / float64(width)
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*d.Stride + x
			if d.Mask[i] != 0 {
				frac[y*w+x] = float32(float64(d.Pix[i]) * inv)
				mask[y*w+x] = 1
			}
		}
	}
	return frac, mask
}

// DepthFromFraction returns the depth in metres of a disparity given as a
// fraction of the image width, which is the same at any resolution:
// DepthFromPixels(frac·Width).
func (r *Rig) DepthFromFraction(frac float64) (z float64, ok bool) {
	return r.DepthFromPixels(FractionToPixels(frac, r.Width))
}

// FractionFromDepth returns the disparity, as a fraction of the image width,
// of a point z metres away: PixelsFromDepth(z)/Width.
func (r *Rig) FractionFromDepth(z float64) (frac float64, ok bool) {
	px, ok := r.PixelsFromDepth(z)
	if !ok {
		return 0, false
	}
	return PixelsToFraction(px, r.Width), true
}

// DepthMapFromFraction converts image n of a batch of single-channel
// disparities expressed as fractions of the width (the network's output)
// into metric depth. The batch may have any resolution: it is taken to be
// the rig's images resized to W × H, whatever the aspect ratio (the
// network's input is resized that way), and the rig is rescaled with
// Stretched first, so r describes the cameras at their own size.
// Pixels whose disparity is not positive and finite, or whose depth is not,
// are invalid.
func (r *Rig) DepthMapFromFraction(im *planar.Image, n int) (*Depth, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	d, err := DisparityFromFraction(im, n)
	if err != nil {
		return nil, err
	}
	s := r
	if im.W != r.Width || im.H != r.Height {
		if s, err = r.Stretched(im.W, im.H); err != nil {
			return nil, err
		}
	}
	return s.DisparityToDepth(d)
}
