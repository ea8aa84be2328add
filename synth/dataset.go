package synth

import (
	"context"
	"errors"
	"fmt"
	"image"
	"os"
	"path/filepath"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// PairName returns the file name stem of pair index: six digits, zero
// padded ("000042"); more digits for indices of a million and beyond.
func PairName(index int) string { return fmt.Sprintf("%06d", index) }

// Record returns p as a record of package dataset under the name: the two
// images as 8-bit RGB, the disparities of both views in pixels, the left
// depth in metres, and the occlusion masks as 8-bit gray images (255 where
// the pixel is not visible in the other view, 0 elsewhere). It returns an
// error if p or its rig is nil or a map has another shape than the rig.
func (p *Pair) Record(name string) (*dataset.Record, error) {
	if err := p.check(); err != nil {
		return nil, err
	}
	r := &dataset.Record{Name: name, Left: p.Left.ToNRGBA(0), Right: p.Right.ToNRGBA(0),
		OccLeft: occlusionImage(p.VisibleLeft), OccRight: occlusionImage(p.VisibleRight)}
	var err error
	if r.DispLeft, err = depth.DisparityFromFraction(p.DispLeft, 0); err != nil {
		return nil, fmt.Errorf("synth: %w", err)
	}
	if r.DispRight, err = depth.DisparityFromFraction(p.DispRight, 0); err != nil {
		return nil, fmt.Errorf("synth: %w", err)
	}
	if r.DepthLeft, err = depth.NewDepth(image.Rect(0, 0, p.Rig.Width, p.Rig.Height)); err != nil {
		return nil, fmt.Errorf("synth: %w", err)
	}
	for i, z := range p.DepthLeft.Pix {
		r.DepthLeft.Set(i%p.Rig.Width, i/p.Rig.Width, z)
	}
	return r, nil
}

// Save writes p into the data-set folder dir under the stem name, through
// dataset.WriteRecord (see Record for what is written), and for a varied pair
// its rig as rigs/NAME.json (dataset.WritePairRig). It does not write rig.json (WriteDataset
// does). Every file is written atomically.
func (p *Pair) Save(dir, name string) error {
	r, err := p.Record(name)
	if err != nil {
		return err
	}
	if err := dataset.WriteRecord(dir, r); err != nil {
		return fmt.Errorf("synth: saving pair %s: %w", name, err)
	}
	if p.Capture != nil {
		if err := dataset.WritePairRig(dir, name, p.Rig); err != nil {
			return fmt.Errorf("synth: saving pair %s: %w", name, err)
		}
	}
	return nil
}

func (p *Pair) check() error {
	if p == nil || p.Rig == nil {
		return errors.New("synth: pair or its rig is nil")
	}
	w, h := p.Rig.Width, p.Rig.Height
	for _, im := range []struct {
		name string
		c    int
		m    *planar.Image
	}{
		{"left image", 3, p.Left}, {"right image", 3, p.Right},
		{"left disparity", 1, p.DispLeft}, {"right disparity", 1, p.DispRight},
		{"left depth", 1, p.DepthLeft}, {"left visibility", 1, p.VisibleLeft}, {"right visibility", 1, p.VisibleRight},
	} {
		if err := im.m.Check(im.name); err != nil {
			return fmt.Errorf("synth: %w", err)
		}
		if im.m.N != 1 || im.m.C != im.c || im.m.H != h || im.m.W != w {
			return fmt.Errorf("synth: %s has shape %s, want 1x%dx%dx%d (the rig size)", im.name, im.m.Shape(), im.c, h, w)
		}
	}
	return nil
}

// occlusionImage turns a visibility mask (1 visible) into the file form
// (255 not visible).
func occlusionImage(m *planar.Image) *image.Gray {
	g := image.NewGray(image.Rect(0, 0, m.W, m.H))
	for i, v := range m.Pix {
		if v == 0 {
			g.Pix[i] = 255
		}
	}
	return g
}

// WriteDataset renders pairs 0 … n−1 of the style for the seed and writes
// them, with the rig, into dir in the layout of package dataset (through
// dataset.Create and dataset.WriteRecord). If dir already holds a rig.json for
// another rig (another style or size), WriteDataset refuses to mix the two
// and returns an error; with the same rig it replaces the pairs it writes
// and leaves others in place. Varied pairs (Options.Vary) have a rig each,
// written as rigs/NAME.json instead of rig.json, and are refused in a
// folder that holds a rig.json. Pairs are rendered by opt.Workers goroutines;
// each pair's files depend only on (style, seed, index, size, samples), so
// the output is the same for any number of workers. It returns the first
// error met.
func WriteDataset(dir string, style Style, seed uint64, n int, opt *Options) error {
	return WriteDatasetContext(context.Background(), dir, style, seed, n, opt)
}

// WriteDatasetContext is WriteDataset, stopped when ctx is done: it then
// starts no more pairs, waits for those in progress (each pair's files are
// written atomically) and returns an error that wraps ctx's. A ctx that is
// already done writes nothing.
func WriteDatasetContext(ctx context.Context, dir string, style Style, seed uint64, n int, opt *Options) error {
	o, err := opt.resolved()
	if err != nil {
		return err
	}
	if n < 0 {
		return fmt.Errorf("synth: pair count %d is negative", n)
	}
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("synth: %w", err)
	}
	vary, err := o.Vary.resolve(style)
	if err != nil {
		return err
	}
	rig, err := style.Rig(o.Width, o.Height)
	if err != nil {
		return err
	}
	if vary == VaryNone {
		if err := dataset.Create(dir, rig); err != nil {
			return fmt.Errorf("synth: writing %s at %dx%d: %w", style, rig.Width, rig.Height, err)
		}
	} else if _, err := os.Stat(filepath.Join(dir, dataset.RigFile)); err == nil {
		return fmt.Errorf("synth: %s already holds a data set of one rig (%s); write varied pairs, which have a rig each, into an empty folder", dir, dataset.RigFile)
	}
	return forEachPair(ctx, n, o, func(i int) error {
		p, err := Generate(style, seed, i, &o)
		if err != nil {
			return err
		}
		return p.Save(dir, PairName(i))
	})
}
