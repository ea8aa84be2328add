package synth

import (
	"cmp"
	"fmt"
	"runtime"
)

// Default image size and supersampling.
const (
	DefaultWidth   = 256
	DefaultHeight  = 128
	DefaultSamples = 2
	// MaxSamples bounds Options.Samples.
	MaxSamples = 8
)

// Options sets the image size and rendering effort. A nil *Options, and a
// zero field, mean the default.
type Options struct {
	// Width and Height are the image size in pixels; 0 means DefaultWidth
	// and DefaultHeight. The rig's focal length scales with Width (the
	// field of view is fixed per style).
	Width, Height int

	// Samples is the number of colour samples along each axis of a pixel
	// near silhouettes and creases (Samples² rays on a regular sub-pixel
	// grid; elsewhere one pre-filtered sample at the centre suffices, see
	// the package documentation); 0 means DefaultSamples.
	Samples int

	// Workers is the number of pairs WriteDataset renders at once; 0 means
	// runtime.GOMAXPROCS(0). It does not change the output.
	Workers int

	// Vary selects the per-pair randomisation (see Variation); the zero
	// value VaryDefault leaves Greenhouse and Storage unvaried and varies
	// the other styles.
	Vary Variation

	// Progress, if not nil, is called by WriteDataset after each pair is
	// written with the number of pairs done and the total, from one
	// goroutine at a time.
	Progress func(done, total int)
}

func (o *Options) resolved() (Options, error) {
	var r Options
	if o != nil {
		r = *o
	}
	r.Width = cmp.Or(r.Width, DefaultWidth)
	r.Height = cmp.Or(r.Height, DefaultHeight)
	r.Samples = cmp.Or(r.Samples, DefaultSamples)
	r.Workers = cmp.Or(r.Workers, runtime.GOMAXPROCS(0))
	if r.Width < 2 || r.Height < 1 {
		return r, fmt.Errorf("synth: image size %dx%d: width must be at least 2 and height at least 1", r.Width, r.Height)
	}
	if r.Samples < 1 || r.Samples > MaxSamples {
		return r, fmt.Errorf("synth: %d samples per axis: want 1 to %d", r.Samples, MaxSamples)
	}
	if r.Workers < 1 {
		return r, fmt.Errorf("synth: %d workers: want at least 1", r.Workers)
	}
	return r, nil
}

// Generate renders pair number index of the style for the seed. The same
// (style, seed, index, size, samples, variation) always gives the same
// pair, whatever else is generated and in whatever order. It returns an
// error for an unknown style, a negative index or invalid options.
func Generate(style Style, seed uint64, index int, opt *Options) (*Pair, error) {
	o, err := opt.resolved()
	if err != nil {
		return nil, err
	}
	if index < 0 {
		return nil, fmt.Errorf("synth: pair index %d is negative", index)
	}
	return generate(style, seed, index, o)
}
