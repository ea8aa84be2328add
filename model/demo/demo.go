// Package demo bundles a small synthetic input so that the example commands
// run with no set-up: the left image of a greenhouse aisle (256×128, made by
// package synth, pair 000000 of testdata/synth/greenhouse, seed 1) and the
// rig it was rendered with (72° field of view, 0.12 m baseline). The data
// is invented by our renderer; it is for demonstrations, not evaluation.
//
// Frames also reads a folder of images in name order, for frame loops;
// ImageFiles lists them.
//
// Errors start with "demo: ".
package demo

import (
	"bytes"
	_ "embed"
	"fmt"
	"image"
	_ "image/jpeg" // register the JPEG decoder for Frames
	"image/png"
	"io"
	"iter"
	"os"
	"path/filepath"
	"slices"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
)

var (
	//go:embed greenhouse_left.png
	leftPNG []byte
	//go:embed greenhouse_rig.json
	rigJSON []byte
)

// Name is the demo image's name, for output file names.
const Name = "greenhouse_000000"

// Left decodes and returns the demo left image.
func Left() (image.Image, error) {
	img, err := png.Decode(bytes.NewReader(leftPNG))
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	return img, nil
}

// Rig returns the demo image's rig (a fresh copy).
func Rig() (*depth.Rig, error) {
	r, err := depth.ReadRig(bytes.NewReader(rigJSON))
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	return r, nil
}

// Frame is one image of Frames.
type Frame struct {
	// Name is the file name without its extension (Name for the demo).
	Name  string
	Image image.Image
}

// Frames yields the PNG and JPEG images of dir (extensions .png, .jpg,
// .jpeg in any case; other files and names starting with "." are skipped),
// decoded one at a time in name order. If dir is "" it yields the demo
// image once. A folder that cannot be read, holds no image, or a file that
// does not decode yields an error naming it; the loop may go on after an
// error of one file.
func Frames(dir string) iter.Seq2[Frame, error] {
	return func(yield func(Frame, error) bool) {
		if dir == "" {
			img, err := Left()
			yield(Frame{Name: Name, Image: img}, err)
			return
		}
		names, err := ImageFiles(dir)
		if err != nil {
			yield(Frame{}, err)
			return
		}
		if len(names) == 0 {
			yield(Frame{}, fmt.Errorf("demo: %s holds no PNG or JPEG image", dir))
			return
		}
		for _, n := range names {
			img, err := decodeFile(filepath.Join(dir, n))
			if !yield(Frame{Name: strings.TrimSuffix(n, filepath.Ext(n)), Image: img}, err) {
				return
			}
		}
	}
}

// ImageFiles returns the names (not paths) of the PNG and JPEG files in
// dir, in name order, with the rules of Frames: extensions .png, .jpg and
// .jpeg in any case; folders and names starting with "." are skipped. A
// folder without images gives an empty list and no error; an unreadable
// folder gives an error.
func ImageFiles(dir string) ([]string, error) {
	ents, err := os.ReadDir(dir)
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	var names []string
	for _, e := range ents {
		ext := strings.ToLower(filepath.Ext(e.Name()))
		if !e.IsDir() && !strings.HasPrefix(e.Name(), ".") && (ext == ".png" || ext == ".jpg" || ext == ".jpeg") {
			names = append(names, e.Name())
		}
	}
	slices.Sort(names)
	return names, nil
}

func decodeFile(path string) (image.Image, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	defer f.Close()
	// Check the header's size first: a few bytes may claim 60000×60000
	// pixels, which image.Decode would try to allocate.
	c, _, err := image.DecodeConfig(f)
	if err != nil {
		return nil, fmt.Errorf("demo: %s: %w", path, err)
	}
	if c.Width > depth.MaxSide || c.Height > depth.MaxSide || c.Width*c.Height > depth.MaxPixels {
		return nil, fmt.Errorf("demo: %s: image size %dx%d is too large (sides up to %d, at most %d pixels)", path, c.Width, c.Height, depth.MaxSide, depth.MaxPixels)
	}
	if _, err := f.Seek(0, io.SeekStart); err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	img, _, err := image.Decode(f)
	if err != nil {
		return nil, fmt.Errorf("demo: %s: %w", path, err)
	}
	return img, nil
}
