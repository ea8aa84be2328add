package data

import (
	"fmt"
	"image"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// Sample is one pair, resized to the requested size.
type Sample struct {
	// Name is the pair's name.
	Name string
	// Left and Right are 1×3×H×W images, RGB in [0, 1].
	Left, Right *planar.Image
	// DispLeft and DispRight are 1×1×H×W disparities as fractions of the
	// width (0 = no ground truth), or nil if the dataset has none.
	DispLeft, DispRight *planar.Image
	// DepthLeft is 1×1×H×W depth in metres (0 = no ground truth), or nil.
	DepthLeft *planar.Image
	// OccLeft and OccRight are the 1×1×H×W occlusion maps in [0, 1], or nil.
	OccLeft, OccRight *planar.Image
	// Flipped reports that the sample was mirrored and its views swapped
	// (see FlipSwap); DepthLeft is then nil.
	Flipped bool
}

// clone returns a deep copy of s.
func (s *Sample) clone() *Sample {
	c := *s
	for _, m := range []**planar.Image{&c.Left, &c.Right, &c.DispLeft, &c.DispRight, &c.DepthLeft, &c.OccLeft, &c.OccRight} {
		if *m != nil {
			*m = (*m).Clone()
		}
	}
	return &c
}

// LoadSample reads pair i of ds (with dataset.Set.Read) and resizes it to width ×
// height. It returns an error naming the file if an image or truth map is
// corrupt, has another size than recorded by dataset.Open, or a truth map
// has more than one channel.
func LoadSample(ds *dataset.Set, i, width, height int) (*Sample, error) {
	if width <= 0 || height <= 0 || width > planar.MaxSide || height > planar.MaxSide || width*height > planar.MaxPixels {
		return nil, fmt.Errorf("data: invalid output size %d×%d (sides in [1, %d], at most %d pixels)", width, height, planar.MaxSide, planar.MaxPixels)
	}
	r, err := ds.Read(i)
	if err != nil {
		return nil, fmt.Errorf("data: %w", err)
	}
	s := &Sample{Name: r.Name}
	if s.Left, err = toPlanar(r.Left, width, height); err != nil {
		return nil, fmt.Errorf("data: %s: %w", ds.Pairs[i].Left, err)
	}
	if s.Right, err = toPlanar(r.Right, width, height); err != nil {
		return nil, fmt.Errorf("data: %s: %w", ds.Pairs[i].Right, err)
	}
	// Disparity in pixels at the stored width → fraction of the width.
	inv := 1 / float32(ds.Pairs[i].Width)
	if r.DispLeft != nil {
		s.DispLeft = nearest(scaled(&r.DispLeft.Map, inv), width, height)
	}
	if r.DispRight != nil {
		s.DispRight = nearest(scaled(&r.DispRight.Map, inv), width, height)
	}
	if r.DepthLeft != nil {
		s.DepthLeft = nearest(scaled(&r.DepthLeft.Map, 1), width, height)
	}
	if r.OccLeft != nil {
		s.OccLeft = nearest(grey(r.OccLeft), width, height)
	}
	if r.OccRight != nil {
		s.OccRight = nearest(grey(r.OccRight), width, height)
	}
	return s, nil
}

// toPlanar returns img as a 1×3×H×W image at width × height.
func toPlanar(img image.Image, width, height int) (*planar.Image, error) {
	if b := img.Bounds(); b.Dx() == width && b.Dy() == height {
		return planar.FromImage(img)
	}
	return resizeImage(img, width, height)
}

// resizeImage scales img to width × height with Catmull-Rom and returns it
// as a 1×3×H×W image; alpha is divided out (planar.Resampler: bit for bit
// golang.org/x/image/draw.CatmullRom into an RGBA64 image, then
// planar.FromImageInto).
func resizeImage(img image.Image, width, height int) (*planar.Image, error) {
	rs, err := planar.NewResampler(width, height)
	if err != nil {
		return nil, err
	}
	out := planar.New(1, 3, height, width)
	if err := rs.Scale(out, img); err != nil {
		return nil, err
	}
	return out, nil
}

// planeMap is a single-channel w×h map, row-major.
type planeMap struct {
	pix  []float32
	w, h int
}

// scaled returns the valid values of m multiplied by scale, 0 elsewhere.
func scaled(m *depth.Map, scale float32) planeMap {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	out := planeMap{make([]float32, w*h), w, h}
	for y := range h {
		for x := range w {
			if i := y*m.Stride + x; m.Mask[i] != 0 {
				out.pix[y*w+x] = m.Pix[i] * scale
			}
		}
	}
	return out
}

// grey returns the grey level of img (its red channel) in [0, 1].
func grey(img image.Image) planeMap {
	b := img.Bounds()
	out := planeMap{make([]float32, b.Dx()*b.Dy()), b.Dx(), b.Dy()}
	for y := 0; y < b.Dy(); y++ {
		for x := 0; x < b.Dx(); x++ {
			r, _, _, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
			out.pix[y*b.Dx()+x] = float32(r) / 0xffff
		}
	}
	return out
}

// nearest resamples a map to width×height, taking for each output pixel
// centre the input pixel whose area contains it.
func nearest(m planeMap, width, height int) *planar.Image {
	pix, w, h := m.pix, m.w, m.h
	out := planar.New(1, 1, height, width)
	if w == width && h == height {
		copy(out.Pix, pix)
		return out
	}
	xs := make([]int, width)
	for x := range xs {
		xs[x] = min(int((float64(x)+0.5)*float64(w)/float64(width)), w-1)
	}
	for y := 0; y < height; y++ {
		sy := min(int((float64(y)+0.5)*float64(h)/float64(height)), h-1)
		row := pix[sy*w : (sy+1)*w]
		dst := out.Pix[y*width : (y+1)*width]
		for x, sx := range xs {
			dst[x] = row[sx]
		}
	}
	return out
}
