package synth

import (
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"os"
	"path/filepath"
	"sync"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/atomicfile"
	"github.com/parallaxdepth/parallax/planar"
)

// Folders of a dataset, relative to its root (see the package
// documentation for the layout).
const (
	DirLeft      = "left"
	DirRight     = "right"
	DirDispLeft  = "truth/disp_left"
	DirDispRight = "truth/disp_right"
	DirDepthLeft = "truth/depth_left"
	DirOccLeft   = "truth/occ_left"
	DirOccRight  = "truth/occ_right"
	RigFile      = "rig.json"
)

// PairName returns the file name stem of pair index: six digits, zero
// padded ("000042"); more digits for indices of a million and beyond.
func PairName(index int) string { return fmt.Sprintf("%06d", index) }

// Save writes p into the dataset folder dir under the stem name: the two
// images as 8-bit RGB PNG, the disparities of both views in pixels and the
// left depth in metres as single-channel PFM, and the occlusion masks as
// 8-bit gray PNG (255 where the pixel is not visible in the other view, 0
// elsewhere). It creates the folders it needs and does not write rig.json
// (WriteDataset does). Every file is written atomically.
func (p *Pair) Save(dir, name string) error {
	if err := p.check(); err != nil {
		return err
	}
	if name == "" || filepath.Base(name) != name {
		return fmt.Errorf("synth: pair name %q must be a plain file name", name)
	}
	if err := makeDirs(dir); err != nil {
		return err
	}
	w, h := p.Rig.Width, p.Rig.Height
	pixels := func(frac []float32) []float32 {
		out := make([]float32, len(frac))
		for i, v := range frac {
			out[i] = float32(float64(v) * float64(w))
		}
		return out
	}
	steps := []func() error{
		func() error { return savePNG(filepath.Join(dir, DirLeft, name+".png"), p.Left.ToNRGBA(0)) },
		func() error { return savePNG(filepath.Join(dir, DirRight, name+".png"), p.Right.ToNRGBA(0)) },
		func() error {
			return depth.SavePFM(filepath.Join(dir, DirDispLeft, name+".pfm"), pixels(p.DispLeft.Pix), w, h, 1)
		},
		func() error {
			return depth.SavePFM(filepath.Join(dir, DirDispRight, name+".pfm"), pixels(p.DispRight.Pix), w, h, 1)
		},
		func() error {
			return depth.SavePFM(filepath.Join(dir, DirDepthLeft, name+".pfm"), p.DepthLeft.Pix, w, h, 1)
		},
		func() error {
			return savePNG(filepath.Join(dir, DirOccLeft, name+".png"), occlusionImage(p.VisibleLeft))
		},
		func() error {
			return savePNG(filepath.Join(dir, DirOccRight, name+".png"), occlusionImage(p.VisibleRight))
		},
	}
	for _, step := range steps {
		if err := step(); err != nil {
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

func makeDirs(dir string) error {
	for _, d := range []string{DirLeft, DirRight, DirDispLeft, DirDispRight, DirDepthLeft, DirOccLeft, DirOccRight} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			return fmt.Errorf("synth: %w", err)
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
// them, with the rig, into dir in the layout of the package documentation.
// If dir already holds a rig.json for another rig (another style or size),
// WriteDataset refuses to mix the two and returns an error; with the same
// rig it replaces the pairs it writes and leaves others in place.
// Pairs are rendered by opt.Workers goroutines; each pair's files depend
// only on (style, seed, index, size, samples), so the output is the same
// for any number of workers. It returns the first error met.
func WriteDataset(dir string, style Style, seed uint64, n int, opt *Options) error {
	o, err := opt.resolved()
	if err != nil {
		return err
	}
	if n < 0 {
		return fmt.Errorf("synth: pair count %d is negative", n)
	}
	rig, err := style.Rig(o.Width, o.Height)
	if err != nil {
		return err
	}
	rigPath := filepath.Join(dir, RigFile)
	if _, err := os.Stat(rigPath); err == nil {
		old, err := depth.LoadRig(rigPath)
		if err != nil {
			return fmt.Errorf("synth: %s already holds a dataset whose rig cannot be read: %w", dir, err)
		}
		if *old != *rig {
			return fmt.Errorf("synth: %s already holds a dataset of another rig (%dx%d, focal %.4g px, baseline %.4g m); write %s at %dx%d into an empty folder",
				dir, old.Width, old.Height, old.Fx, old.Baseline, style, rig.Width, rig.Height)
		}
	}
	if err := makeDirs(dir); err != nil {
		return err
	}
	if err := depth.SaveRig(rigPath, rig); err != nil {
		return fmt.Errorf("synth: %w", err)
	}
	jobs := make(chan int)
	errs := make(chan error)
	var wg sync.WaitGroup
	stop := make(chan struct{})
	for k := 0; k < min(o.Workers, max(n, 1)); k++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range jobs {
				p, err := Generate(style, seed, i, &o)
				if err == nil {
					err = p.Save(dir, PairName(i))
				}
				select {
				case errs <- err:
				case <-stop:
					return
				}
			}
		}()
	}
	go func() {
		defer close(jobs)
		for i := 0; i < n; i++ {
			select {
			case jobs <- i:
			case <-stop:
				return
			}
		}
	}()
	var first error
	for done := 0; done < n; done++ {
		err := <-errs
		if err != nil {
			first = err
			break
		}
		if o.Progress != nil {
			o.Progress(done+1, n)
		}
	}
	close(stop)
	wg.Wait()
	return first
}

// pngEncoder favours speed: at the default level, compression takes about
// as long as rendering, for files only about 15 % smaller.
var pngEncoder = png.Encoder{CompressionLevel: png.BestSpeed}

// savePNG encodes img as PNG into path atomically.
func savePNG(path string, img image.Image) error {
	return atomicfile.Write(path, "synth", func(w io.Writer) error { return pngEncoder.Encode(w, img) })
}
