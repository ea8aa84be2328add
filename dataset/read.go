package dataset

import (
	"fmt"
	"image"
	_ "image/jpeg" // register the JPEG decoder
	_ "image/png"  // register the PNG decoder
	"io"
	"iter"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// Record is the content of one pair at its stored size: the decoded images
// and the ground truth the set has. WriteRecord takes the same type.
type Record struct {
	// Name is the pair's name.
	Name string
	// Left and Right are the decoded images.
	Left, Right image.Image
	// DispLeft and DispRight are the views' disparities in pixels at the
	// stored width, or nil if the set has none.
	DispLeft, DispRight *depth.Disparity
	// DepthLeft is the left view's depth in metres, or nil.
	DepthLeft *depth.Depth
	// OccLeft and OccRight are the occlusion maps as decoded (grey, 255 =
	// hidden in the other view), or nil.
	OccLeft, OccRight image.Image
	// Rig is the pair's rig at the stored size (PairFiles.Rig, a copy), or
	// nil if the set has none. Set.Read fills it; WriteRecord ignores it.
	Rig *depth.Rig
}

// Read decodes pair i of s and the ground truth the set has, at the stored
// size. It returns an error naming the file if an image or truth map is
// corrupt, has another size than recorded by Open (the file may have
// changed since), or a truth map has more than one channel.
func (s *Set) Read(i int) (*Record, error) {
	if i < 0 || i >= len(s.Pairs) {
		return nil, fmt.Errorf("dataset: pair index %d out of range [0, %d)", i, len(s.Pairs))
	}
	p := s.Pairs[i]
	r := &Record{Name: p.Name}
	if p.Rig != nil {
		rig := *p.Rig
		r.Rig = &rig
	}
	var err error
	if r.Left, err = decodeFile(p.Left, p.Width, p.Height); err != nil {
		return nil, err
	}
	if r.Right, err = decodeFile(p.Right, p.Width, p.Height); err != nil {
		return nil, err
	}
	for _, k := range s.Truth {
		path := p.Truth[k]
		switch k {
		case DispLeft, DispRight, DepthLeft:
			m, err := readMap(path, p.Width, p.Height)
			if err != nil {
				return nil, err
			}
			switch k {
			case DispLeft:
				r.DispLeft = &depth.Disparity{Map: m}
			case DispRight:
				r.DispRight = &depth.Disparity{Map: m}
			default:
				r.DepthLeft = &depth.Depth{Map: m}
			}
		case OccLeft:
			r.OccLeft, err = decodeFile(path, p.Width, p.Height)
		case OccRight:
			r.OccRight, err = decodeFile(path, p.Width, p.Height)
		}
		if err != nil {
			return nil, err
		}
	}
	return r, nil
}

// readMap reads a one-channel PFM of size w×h as a map: values that are
// positive and finite are valid, the others invalid and zeroed.
func readMap(path string, w, h int) (depth.Map, error) {
	pix, pw, ph, c, err := depth.LoadPFM(path)
	if err != nil {
		return depth.Map{}, fmt.Errorf("dataset: %w", err)
	}
	if c != 1 {
		return depth.Map{}, fmt.Errorf("dataset: %s has %d channels, want 1", path, c)
	}
	if pw != w || ph != h {
		return depth.Map{}, fmt.Errorf("dataset: %s is %d×%d but the pair's images are %d×%d", path, pw, ph, w, h)
	}
	mask := make([]uint8, len(pix))
	for i, v := range pix {
		if v > 0 && v <= math.MaxFloat32 {
			mask[i] = 1
		} else {
			pix[i] = 0 // NaN, ±Inf, 0 and negative values carry no truth
		}
	}
	return depth.Map{Pix: pix, Mask: mask, Stride: w, Rect: image.Rect(0, 0, w, h)}, nil
}

// imageSize reads the size of the image at path from its header. Its
// errors name the path and lack the package prefix.
func imageSize(path string) (w, h int, err error) {
	f, err := os.Open(path)
	if err != nil {
		return 0, 0, err
	}
	defer f.Close()
	return checkedConfig(f, path)
}

// checkedConfig reads an image header from f and refuses a size that is
// not positive or exceeds planar.MaxSide or planar.MaxPixels.
func checkedConfig(f io.Reader, path string) (w, h int, err error) {
	c, _, err := image.DecodeConfig(f)
	if err != nil {
		return 0, 0, fmt.Errorf("%s: %w", path, err)
	}
	if c.Width < 1 || c.Height < 1 {
		return 0, 0, fmt.Errorf("%s: image size %dx%d has no pixels", path, c.Width, c.Height)
	}
	if c.Width > planar.MaxSide || c.Height > planar.MaxSide || c.Width*c.Height > planar.MaxPixels {
		return 0, 0, fmt.Errorf("%s: image size %dx%d is too large (sides up to %d, at most %d pixels)", path, c.Width, c.Height, planar.MaxSide, planar.MaxPixels)
	}
	return c.Width, c.Height, nil
}

// LoadImage decodes the PNG or JPEG image at path. It reads the size from
// the header first and refuses, before decoding any pixel, an image whose
// sides exceed planar.MaxSide or whose area exceeds planar.MaxPixels, so a
// hostile header cannot make it allocate without bound. Errors name the
// file.
func LoadImage(path string) (image.Image, error) { return decodeFile(path, 0, 0) }

// decodeFile is LoadImage that also requires the size w×h, unless w is 0.
func decodeFile(path string, w, h int) (image.Image, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("dataset: %w", err)
	}
	defer f.Close()
	cw, ch, err := checkedConfig(f, path)
	if err != nil {
		return nil, fmt.Errorf("dataset: %w", err)
	}
	if w != 0 && (cw != w || ch != h) {
		return nil, fmt.Errorf("dataset: %s is %d×%d, expected %d×%d", path, cw, ch, w, h)
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, fmt.Errorf("dataset: %w", err)
	}
	img, _, err := image.Decode(f)
	if err != nil {
		return nil, fmt.Errorf("dataset: %s: %w", path, err)
	}
	if b := img.Bounds(); b.Dx() != cw || b.Dy() != ch {
		return nil, fmt.Errorf("dataset: %s decodes to %d×%d, its header says %d×%d", path, b.Dx(), b.Dy(), cw, ch)
	}
	return img, nil
}

// Frame is one image of Frames.
type Frame struct {
	// Name is the file name without its extension.
	Name  string
	Image image.Image
}

// Frames yields the images of dir listed by ImageFiles, decoded one at a
// time with LoadImage, in name order. A folder that cannot be read or holds
// no image yields one error; a file that does not decode yields an error
// naming it, and the loop may go on after it.
func Frames(dir string) iter.Seq2[Frame, error] {
	return func(yield func(Frame, error) bool) {
		names, err := ImageFiles(dir)
		if err != nil {
			yield(Frame{}, err)
			return
		}
		if len(names) == 0 {
			yield(Frame{}, fmt.Errorf("dataset: %s holds no PNG or JPEG image", dir))
			return
		}
		for _, n := range names {
			img, err := LoadImage(filepath.Join(dir, n))
			if !yield(Frame{Name: strings.TrimSuffix(n, filepath.Ext(n)), Image: img}, err) {
				return
			}
		}
	}
}

// Load decodes the pair's views with LoadImage; with no Right path it
// returns the left image alone and a nil right. Errors name the file, also
// for a right view whose size is not the left's.
func (p PairFiles) Load() (left, right image.Image, err error) {
	if left, err = LoadImage(p.Left); err != nil || p.Right == "" {
		return left, nil, err
	}
	b := left.Bounds()
	if right, err = decodeFile(p.Right, b.Dx(), b.Dy()); err != nil {
		return nil, nil, err
	}
	return left, right, nil
}
