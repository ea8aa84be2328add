package depth

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"github.com/parallaxdepth/parallax/planar"
)

// Map is a single-channel float32 map with a validity mask, laid out like
// the standard library's image types. It is the common part of Disparity,
// Depth and Confidence.
//
// The methods assume that Pix and Mask cover Rect, as the constructors
// guarantee; on a map built by hand with short slices they panic, like the
// image types do. Check verifies a map; the functions of this package that
// return an error call it on the maps they are given.
type Map struct {
	// Pix holds the values: the value at (x, y) is
	// Pix[(y-Rect.Min.Y)*Stride + (x-Rect.Min.X)].
	Pix []float32
	// Mask holds 1 for a valid pixel and 0 for an invalid one, at the same
	// offsets as Pix. The value under an invalid pixel has no meaning.
	Mask []uint8
	// Stride is the distance in elements between vertically adjacent pixels.
	Stride int
	// Rect is the map's bounds, in the coordinates of the full image.
	Rect image.Rectangle
}

// newMap returns a zeroed, all-invalid map with bounds r, or an error if r is
// empty or too large.
func newMap(r image.Rectangle) (Map, error) {
	w, h := r.Dx(), r.Dy()
	if w < 1 || h < 1 || w > planar.MaxSide || h > planar.MaxSide || w*h > planar.MaxPixels {
		return Map{}, fmt.Errorf("depth: map bounds %v out of range (sides in [1, %d], at most %d pixels)", r, planar.MaxSide, planar.MaxPixels)
	}
	return Map{Pix: make([]float32, w*h), Mask: make([]uint8, w*h), Stride: w, Rect: r}, nil
}

// newKind returns an all-invalid map of kind T with bounds r: the one
// constructor behind NewDisparity, NewDepth and NewConfidence.
func newKind[T Disparity | Depth | Confidence](r image.Rectangle) (*T, error) {
	m, err := newMap(r)
	if err != nil {
		return nil, err
	}
	return &T{m}, nil
}

// Bounds returns the map's bounds.
func (m *Map) Bounds() image.Rectangle { return m.Rect }

// PixOffset returns the index in Pix and Mask of the pixel at (x, y).
func (m *Map) PixOffset(x, y int) int {
	return (y-m.Rect.Min.Y)*m.Stride + (x - m.Rect.Min.X)
}

// At returns the value at (x, y) and whether it is valid. Outside the bounds
// it returns (0, false).
func (m *Map) At(x, y int) (v float32, ok bool) {
	if !(image.Point{x, y}.In(m.Rect)) {
		return 0, false
	}
	i := m.PixOffset(x, y)
	if m.Mask[i] == 0 {
		return 0, false
	}
	return m.Pix[i], true
}

// SetInvalid marks (x, y) invalid and zeroes its value. Outside the bounds it
// does nothing.
func (m *Map) SetInvalid(x, y int) {
	if !(image.Point{x, y}.In(m.Rect)) {
		return
	}
	i := m.PixOffset(x, y)
	m.Pix[i], m.Mask[i] = 0, 0
}

// setPositive stores v at (x, y), valid if v is positive and finite.
func (m *Map) setPositive(x, y int, v float32) {
	if !(image.Point{x, y}.In(m.Rect)) {
		return
	}
	i := m.PixOffset(x, y)
	if v > 0 && v <= math.MaxFloat32 {
		m.Pix[i], m.Mask[i] = v, 1
	} else {
		m.Pix[i], m.Mask[i] = 0, 0
	}
}

// Valid returns the number of valid pixels.
func (m *Map) Valid() int {
	n := 0
	w := m.Rect.Dx()
	for y := 0; y < m.Rect.Dy(); y++ {
		for _, v := range m.Mask[y*m.Stride : y*m.Stride+w] {
			if v != 0 {
				n++
			}
		}
	}
	return n
}

// Check returns an error if the map's slices do not cover its bounds, or if
// a valid pixel's value is NaN or infinite. what names the map in the
// message.
func (m *Map) Check(what string) error {
	if m == nil {
		return fmt.Errorf("depth: %s is nil", what)
	}
	w, h := m.Rect.Dx(), m.Rect.Dy()
	if w < 1 || h < 1 || w > planar.MaxSide || h > planar.MaxSide {
		return fmt.Errorf("depth: %s has bounds %v", what, m.Rect)
	}
	need := (h-1)*m.Stride + w
	if m.Stride < w || len(m.Pix) < need || len(m.Mask) < need {
		return fmt.Errorf("depth: %s: stride %d, %d values and %d mask entries do not cover bounds %v", what, m.Stride, len(m.Pix), len(m.Mask), m.Rect)
	}
	for y := 0; y < h; y++ {
		row := m.Pix[y*m.Stride : y*m.Stride+w]
		mask := m.Mask[y*m.Stride : y*m.Stride+w]
		for x, v := range row {
			if mask[x] != 0 && (math.IsNaN(float64(v)) || math.IsInf(float64(v), 0)) {
				return fmt.Errorf("depth: %s has the non-finite value %v at a valid pixel (%d, %d)", what, v, x+m.Rect.Min.X, y+m.Rect.Min.Y)
			}
		}
	}
	return nil
}

// sub returns the part of m inside r, sharing m's memory. An empty
// intersection gives an empty map.
func (m *Map) sub(r image.Rectangle) Map {
	r = r.Intersect(m.Rect)
	if r.Empty() {
		return Map{}
	}
	i := m.PixOffset(r.Min.X, r.Min.Y)
	return Map{Pix: m.Pix[i:], Mask: m.Mask[i:], Stride: m.Stride, Rect: r}
}

// clone returns a copy of m in memory of its own, rows packed (Stride is
// the width).
func (m *Map) clone() Map {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	c := Map{Pix: make([]float32, w*h), Mask: make([]uint8, w*h), Stride: w, Rect: m.Rect}
	for y := range h {
		copy(c.Pix[y*w:(y+1)*w], m.Pix[y*m.Stride:])
		copy(c.Mask[y*w:(y+1)*w], m.Mask[y*m.Stride:])
	}
	return c
}

// Disparity is a disparity map in pixels, positive, of the left view unless
// the caller says otherwise: left column x matches right column x − d.
type Disparity struct{ Map }

// NewDisparity returns an all-invalid disparity map with bounds r.
func NewDisparity(r image.Rectangle) (*Disparity, error) { return newKind[Disparity](r) }

// Set stores the disparity v pixels at (x, y); the pixel is valid only if v
// is positive and finite.
func (d *Disparity) Set(x, y int, v float32) { d.setPositive(x, y, v) }

// SubMap returns the part of d inside r, sharing d's memory.
func (d *Disparity) SubMap(r image.Rectangle) *Disparity { return &Disparity{d.sub(r)} }

// Clone returns a copy of d in memory of its own (rows packed: Stride is
// the width), e.g. to fill its holes for scoring while keeping d.
func (d *Disparity) Clone() *Disparity { return &Disparity{d.clone()} }

// Depth is a metric depth map in metres, positive.
type Depth struct{ Map }

// NewDepth returns an all-invalid depth map with bounds r.
func NewDepth(r image.Rectangle) (*Depth, error) { return newKind[Depth](r) }

// Set stores the depth v metres at (x, y); the pixel is valid only if v is
// positive and finite.
func (d *Depth) Set(x, y int, v float32) { d.setPositive(x, y, v) }

// SubMap returns the part of d inside r, sharing d's memory.
func (d *Depth) SubMap(r image.Rectangle) *Depth { return &Depth{d.sub(r)} }

// Confidence is a per-pixel confidence in [0, 1], 1 the most confident.
type Confidence struct{ Map }

// NewConfidence returns an all-invalid confidence map with bounds r.
func NewConfidence(r image.Rectangle) (*Confidence, error) { return newKind[Confidence](r) }

// Set stores the confidence v at (x, y); the pixel is valid only if v lies
// in [0, 1].
func (c *Confidence) Set(x, y int, v float32) {
	if !(image.Point{x, y}.In(c.Rect)) {
		return
	}
	i := c.PixOffset(x, y)
	if v >= 0 && v <= 1 {
		c.Pix[i], c.Mask[i] = v, 1
	} else {
		c.Pix[i], c.Mask[i] = 0, 0
	}
}

// SubMap returns the part of c inside r, sharing c's memory.
func (c *Confidence) SubMap(r image.Rectangle) *Confidence { return &Confidence{c.sub(r)} }

// Threshold marks invalid every pixel of m (a Disparity's or Depth's Map)
// whose confidence is below min; pixels outside c's bounds are left alone,
// and so is a nil m.
func (c *Confidence) Threshold(m *Map, min float32) {
	if m == nil {
		return
	}
	r := m.Rect.Intersect(c.Rect)
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if v, ok := c.At(x, y); !ok || v < min {
				m.SetInvalid(x, y)
			}
		}
	}
}

// grayLevels calls f with each pixel of img as a 16-bit grey level, with fast
// paths for *image.Gray16 and *image.Gray. Colour images are converted with
// color.Gray16Model.
func grayLevels(img image.Image, f func(x, y int, level uint16)) {
	b := img.Bounds()
	switch im := img.(type) {
	case *image.Gray16:
		packedGrayLevels(b, im.Pix, im.Stride, 2, f)
	case *image.Gray:
		packedGrayLevels(b, im.Pix, im.Stride, 1, f)
	default:
		for y := b.Min.Y; y < b.Max.Y; y++ {
			for x := b.Min.X; x < b.Max.X; x++ {
				f(x, y, color.Gray16Model.Convert(img.At(x, y)).(color.Gray16).Y)
			}
		}
	}
}

// packedGrayLevels calls f with each pixel of a packed grey image with
// bounds b (its own Rect): big-endian 16-bit levels for 2 bytes a pixel,
// 8-bit levels v as v·257 for 1.
func packedGrayLevels(b image.Rectangle, pix []uint8, stride, bytesPerPixel int, f func(x, y int, level uint16)) {
	for y := b.Min.Y; y < b.Max.Y; y++ {
		i := (y - b.Min.Y) * stride
		for x := b.Min.X; x < b.Max.X; x++ {
			if bytesPerPixel == 2 {
				f(x, y, uint16(pix[i])<<8|uint16(pix[i+1]))
			} else {
				f(x, y, uint16(pix[i])*0x101)
			}
			i += bytesPerPixel
		}
	}
}

// DisparityFromImage reads a disparity map stored as grey levels: the
// disparity at a pixel is its 16-bit grey level (an 8-bit level v counts as
// v·257) times scale, and level 0 is invalid. scale must be positive and
// finite: a file that stores disparity in steps of 1/k pixel takes scale
// 1/k. The map keeps img's bounds.
func DisparityFromImage(img image.Image, scale float64) (*Disparity, error) {
	return mapFromImage[Disparity]("DisparityFromImage", img, scale)
}

// DepthFromImage reads a depth map stored as grey levels: the depth in
// metres is the 16-bit grey level times scale, level 0 invalid. Use
// scale = 0.001 for millimetre files (see ReadPNG16). The map keeps img's
// bounds.
func DepthFromImage(img image.Image, scale float64) (*Depth, error) {
	return mapFromImage[Depth]("DepthFromImage", img, scale)
}

// mapFromImage is DisparityFromImage and DepthFromImage: a positive value of
// level·scale at each non-zero grey level; fn names the caller in errors.
func mapFromImage[T Disparity | Depth](fn string, img image.Image, scale float64) (*T, error) {
	if img == nil {
		return nil, fmt.Errorf("depth: %s: image is nil", fn)
	}
	if !(scale > 0) || math.IsInf(scale, 0) {
		return nil, fmt.Errorf("depth: %s: scale %v must be positive and finite", fn, scale)
	}
	m, err := newMap(img.Bounds())
	if err != nil {
		return nil, err
	}
	grayLevels(img, func(x, y int, level uint16) {
		if level != 0 {
			m.setPositive(x, y, float32(float64(level)*scale))
		}
	})
	return &T{m}, nil
}
