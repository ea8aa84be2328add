package data

import (
	"fmt"
	"image"
	"io"
	"math"
	"os"

	"golang.org/x/image/draw"

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

// Load reads pair i of d and resizes it to width × height. It returns an
// error naming the file if an image or truth map is corrupt, has another
// size than recorded by Open, or a truth map has more than one channel.
func (d *Dataset) Load(i, width, height int) (*Sample, error) {
	if i < 0 || i >= len(d.Pairs) {
		return nil, fmt.Errorf("data: pair index %d out of range [0, %d)", i, len(d.Pairs))
	}
	if width <= 0 || height <= 0 || width > depth.MaxSide || height > depth.MaxSide || width*height > depth.MaxPixels {
		return nil, fmt.Errorf("data: invalid output size %d×%d (sides in [1, %d], at most %d pixels)", width, height, depth.MaxSide, depth.MaxPixels)
	}
	p := d.Pairs[i]
	s := &Sample{Name: p.Name}
	var err error
	if s.Left, err = d.loadImage(p, p.Left, width, height); err != nil {
		return nil, err
	}
	if s.Right, err = d.loadImage(p, p.Right, width, height); err != nil {
		return nil, err
	}
	for _, k := range []struct {
		kind string
		dst  **planar.Image
	}{{DispLeft, &s.DispLeft}, {DispRight, &s.DispRight}, {DepthLeft, &s.DepthLeft}} {
		path, ok := p.Truth[k.kind]
		if !ok {
			continue
		}
		scale := float32(1)
		if k.kind != DepthLeft {
			scale = 1 / float32(p.Width) // pixels at the stored width → fraction
		}
		if *k.dst, err = d.loadPFM(p, path, scale, width, height); err != nil {
			return nil, err
		}
	}
	for _, k := range []struct {
		kind string
		dst  **planar.Image
	}{{OccLeft, &s.OccLeft}, {OccRight, &s.OccRight}} {
		if path, ok := p.Truth[k.kind]; ok {
			if *k.dst, err = d.loadGrey(p, path, width, height); err != nil {
				return nil, err
			}
		}
	}
	return s, nil
}

func (d *Dataset) decode(p Pair, path string) (image.Image, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("data: %w", err)
	}
	defer f.Close()
	// Check the size in the header first: the file may have changed since
	// Open, and decoding a hostile size would allocate without bound.
	c, _, err := image.DecodeConfig(f)
	if err != nil {
		return nil, fmt.Errorf("data: %s: %v", rel(d.Dir, path), err)
	}
	if c.Width != p.Width || c.Height != p.Height {
		return nil, fmt.Errorf("data: %s is %d×%d, expected %d×%d", rel(d.Dir, path), c.Width, c.Height, p.Width, p.Height)
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, fmt.Errorf("data: %w", err)
	}
	img, _, err := image.Decode(f)
	if err != nil {
		return nil, fmt.Errorf("data: %s: %v", rel(d.Dir, path), err)
	}
	if b := img.Bounds(); b.Dx() != p.Width || b.Dy() != p.Height {
		return nil, fmt.Errorf("data: %s is %d×%d, expected %d×%d", rel(d.Dir, path), b.Dx(), b.Dy(), p.Width, p.Height)
	}
	return img, nil
}

func (d *Dataset) loadImage(p Pair, path string, width, height int) (*planar.Image, error) {
	img, err := d.decode(p, path)
	if err != nil {
		return nil, err
	}
	if p.Width == width && p.Height == height {
		out, err := planar.FromImage(img)
		if err != nil {
			return nil, fmt.Errorf("data: %s: %w", rel(d.Dir, path), err)
		}
		return out, nil
	}
	return resizeImage(img, width, height), nil
}

// resizeImage scales img to width × height with Catmull-Rom and returns it
// as a 1×3×H×W image; alpha is divided out (planar.FromImageInto).
func resizeImage(img image.Image, width, height int) *planar.Image {
	dst := image.NewRGBA64(image.Rect(0, 0, width, height))
	draw.CatmullRom.Scale(dst, dst.Rect, img, img.Bounds(), draw.Src, nil)
	out := planar.New(1, 3, height, width)
	if err := planar.FromImageInto(out, dst); err != nil {
		panic(err) // unreachable: out has dst's size
	}
	return out
}

// loadPFM reads a one-channel PFM of the pair's size, multiplies valid
// values by scale, zeroes invalid ones and resamples by nearest neighbour.
func (d *Dataset) loadPFM(p Pair, path string, scale float32, width, height int) (*planar.Image, error) {
	pix, w, h, c, err := depth.LoadPFM(path)
	if err != nil {
		return nil, fmt.Errorf("data: %w", err)
	}
	if c != 1 {
		return nil, fmt.Errorf("data: %s has %d channels, want 1", rel(d.Dir, path), c)
	}
	if w != p.Width || h != p.Height {
		return nil, fmt.Errorf("data: %s is %d×%d but the pair's images are %d×%d", rel(d.Dir, path), w, h, p.Width, p.Height)
	}
	for i, v := range pix {
		if v > 0 && !math.IsInf(float64(v), 1) {
			pix[i] = v * scale
		} else {
			pix[i] = 0 // NaN, ±Inf, 0 and negative values carry no truth
		}
	}
	return nearest(pix, w, h, width, height), nil
}

func (d *Dataset) loadGrey(p Pair, path string, width, height int) (*planar.Image, error) {
	img, err := d.decode(p, path)
	if err != nil {
		return nil, err
	}
	b := img.Bounds()
	pix := make([]float32, b.Dx()*b.Dy())
	for y := 0; y < b.Dy(); y++ {
		for x := 0; x < b.Dx(); x++ {
			r, _, _, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
			pix[y*b.Dx()+x] = float32(r) / 0xffff
		}
	}
	return nearest(pix, b.Dx(), b.Dy(), width, height), nil
}

// nearest resamples a w×h map to width×height, taking for each output pixel
// centre the input pixel whose area contains it.
func nearest(pix []float32, w, h, width, height int) *planar.Image {
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
