package model

import (
	"cmp"
	"errors"
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/depth"
)

// ArchName names the architecture described in this package; it is stored
// with the weights and checked on load.
const ArchName = "parallax-ed"

// ArchVersion is the version of the architecture description. It changes
// whenever the layer list changes in a way that old weights no longer fit.
const ArchVersion = 1

// Levels is the number of encoder levels; each halves the resolution, so the
// input width and height must be multiples of 1<<Levels = 32 (see SizeStep).
const Levels = 5

// Scales is the number of disparity outputs: full, ½, ¼ and ⅛ resolution.
const Scales = 4

// Default sizes and widths; see Config.
const (
	DefaultNetWidth  = 256
	DefaultNetHeight = 128
	DefaultDMax      = 0.3
)

// DefaultEncoder and DefaultDecoder are the channel widths used when a Config
// leaves them empty. Entry i belongs to level i+1 (resolution 1/2^(i+1) for
// the encoder, 1/2^i for the decoder).
var (
	DefaultEncoder = [Levels]int{16, 32, 64, 96, 128}
	DefaultDecoder = [Levels]int{16, 16, 32, 64, 96}
)

// MaxChannels bounds every channel width, so a hostile config in a weights
// file cannot ask for an absurd allocation.
const MaxChannels = 1024

// Input sizes: width and height are multiples of SizeStep = 2^Levels, at
// least MinSide, and their product is at most MaxNetPixels.
const (
	SizeStep = 1 << Levels
	MinSide  = 2 * SizeStep
	// MaxNetPixels bounds Width·Height of a Config (524,288 pixels, e.g.
	// 1024×512; the default is 256×128). A Net's buffers grow with it, so
	// this bound is what keeps a weights file from choosing how much memory
	// loading and running it takes.
	MaxNetPixels = 1 << 19
)

// Config describes one instance of the architecture. It travels with the
// weights (see Save). The zero value is valid and means the defaults.
type Config struct {
	// Arch is the architecture name. If empty it is defaulted to ArchName;
	// any other value is rejected.
	Arch string `json:"arch"`
	// Version is the architecture version. If 0 it is defaulted to
	// ArchVersion; any other value is rejected.
	Version int `json:"version"`
	// Width and Height are the input size in pixels, multiples of 32 and
	// at least 64 (the coarsest level, 1/32, must be at least 2 pixels for
	// reflect padding), with Width·Height at most MaxNetPixels. If 0 they
	// are defaulted to DefaultNetWidth and DefaultNetHeight.
	Width  int `json:"width"`
	Height int `json:"height"`
	// Encoder holds the output channels of the five encoder levels, from
	// the finest (½ resolution) to the coarsest (1/32). If nil it is
	// defaulted to DefaultEncoder.
	Encoder []int `json:"encoder"`
	// Decoder holds the channels of the five decoder levels, from the finest
	// (full resolution) to the coarsest (1/16). If nil it is defaulted to
	// DefaultDecoder.
	Decoder []int `json:"decoder"`
	// DMax is the largest disparity the heads can output, as a fraction of
	// the image width (see DMax and DMaxFromRig). If 0 it is defaulted to DefaultDMax.
	DMax float64 `json:"d_max"`
}

// WithDefaults returns c with every zero field replaced by its default. It
// does not validate; see Validate.
func (c Config) WithDefaults() Config {
	version, encoder, decoder := ArchVersion, DefaultEncoder[:], DefaultDecoder[:]
	if c.Arch == StereoArchName {
		version, encoder, decoder = StereoArchVersion, DefaultStereoEncoder[:], DefaultStereoDecoder[:]
	}
	if c.Arch == "" {
		c.Arch = ArchName
	}
	c.Version = cmp.Or(c.Version, version)
	c.Width = cmp.Or(c.Width, DefaultNetWidth)
	c.Height = cmp.Or(c.Height, DefaultNetHeight)
	c.Encoder = copyOr(c.Encoder, encoder)
	c.Decoder = copyOr(c.Decoder, decoder)
	c.DMax = cmp.Or(c.DMax, DefaultDMax)
	return c
}

// copyOr returns a copy of v, or of def when v is nil.
func copyOr(v, def []int) []int {
	if v == nil {
		v = def
	}
	return append([]int(nil), v...)
}

// Validate returns an error naming the first field of c (after defaults)
// that is out of range.
func (c Config) Validate() error {
	c = c.WithDefaults()
	switch c.Arch {
	case ArchName:
		if c.Version != ArchVersion {
			return fmt.Errorf("model: config: unsupported architecture version %d (want %d)", c.Version, ArchVersion)
		}
	case StereoArchName:
		if c.Version != 1 && c.Version != StereoArchVersion {
			return fmt.Errorf("model: config: unsupported %s version %d (want 1 or %d)", StereoArchName, c.Version, StereoArchVersion)
		}
	default:
		return fmt.Errorf("model: config: unknown architecture %q (want %q or %q)", c.Arch, ArchName, StereoArchName)
	}
	if c.Width < MinSide || c.Width%SizeStep != 0 {
		return fmt.Errorf("model: config: width %d must be a multiple of %d, at least %d", c.Width, SizeStep, MinSide)
	}
	if c.Height < MinSide || c.Height%SizeStep != 0 {
		return fmt.Errorf("model: config: height %d must be a multiple of %d, at least %d", c.Height, SizeStep, MinSide)
	}
	// Both sides are at least MinSide, so neither may exceed
	// MaxNetPixels/MinSide; checking that first keeps the product from
	// overflowing.
	if c.Width > MaxNetPixels/MinSide || c.Height > MaxNetPixels/MinSide || c.Width*c.Height > MaxNetPixels {
		return fmt.Errorf("model: config: input %d×%d exceeds the maximum of %d pixels (MaxNetPixels)", c.Width, c.Height, MaxNetPixels)
	}
	if c.Arch == StereoArchName {
		return c.validateStereo()
	}
	if len(c.Encoder) != Levels {
		return fmt.Errorf("model: config: encoder has %d widths, want %d", len(c.Encoder), Levels)
	}
	if len(c.Decoder) != Levels {
		return fmt.Errorf("model: config: decoder has %d widths, want %d", len(c.Decoder), Levels)
	}
	for i, v := range c.Encoder {
		if v < 1 || v > MaxChannels {
			return fmt.Errorf("model: config: encoder width %d at level %d is outside [1, %d]", v, i+1, MaxChannels)
		}
	}
	for i, v := range c.Decoder {
		if v < 1 || v > MaxChannels {
			return fmt.Errorf("model: config: decoder width %d at level %d is outside [1, %d]", v, i, MaxChannels)
		}
	}
	if math.IsNaN(c.DMax) || c.DMax <= 0 || c.DMax > 1 {
		return fmt.Errorf("model: config: d_max %v must be in (0, 1] (a fraction of the width)", c.DMax)
	}
	return nil
}

// DMax returns the largest disparity, as a fraction of the image width, of a
// point at the nearest depth of interest minDepth seen by a rectified rig
// with focal length focal (pixels, at image width width) and baseline
// baseline (same unit as minDepth): d_max = focal·baseline / minDepth / width.
// It returns an error for non-finite or non-positive arguments, or a result
// above 1 (the point would be outside the other view).
func DMax(focal, baseline, minDepth float64, width int) (float64, error) {
	for _, a := range []struct {
		name string
		v    float64
	}{{"focal length", focal}, {"baseline", baseline}, {"minimum depth", minDepth}} {
		if math.IsNaN(a.v) || math.IsInf(a.v, 0) || a.v <= 0 {
			return 0, fmt.Errorf("model: %s %v must be positive and finite", a.name, a.v)
		}
	}
	if width <= 0 {
		return 0, fmt.Errorf("model: image width %d must be positive", width)
	}
	d := focal * baseline / minDepth / float64(width)
	if math.IsInf(d, 0) || d > 1 {
		return 0, fmt.Errorf("model: d_max %v exceeds the image width: the minimum depth %v is too close for this rig", d, minDepth)
	}
	if !(d > 0) {
		return 0, errors.New("model: d_max underflows to 0")
	}
	return d, nil
}

// DMaxFromRig returns the largest disparity, as a fraction of the rig's
// image width, of a point at the rig's MinDepth: (Fx·Baseline/MinDepth −
// DeltaCx) / Width, which is DMax for a rig with DeltaCx = 0. It returns an
// error if the rig is invalid, MinDepth is 0, or the result is not in (0, 1].
func DMaxFromRig(r *depth.Rig) (float64, error) {
	if r == nil {
		return 0, errors.New("model: rig is nil")
	}
	if err := r.Validate(); err != nil {
		return 0, fmt.Errorf("model: %w", err)
	}
	if !(r.MinDepth > 0) {
		return 0, fmt.Errorf("model: the rig's minimum depth %v must be positive to bound the disparity", r.MinDepth)
	}
	px, ok := r.PixelsFromDepth(r.MinDepth)
	if !ok {
		return 0, fmt.Errorf("model: the rig gives no positive disparity at its minimum depth %v", r.MinDepth)
	}
	d := px / float64(r.Width)
	if d > 1 {
		return 0, fmt.Errorf("model: d_max %v exceeds the image width: the minimum depth %v is too close for this rig", d, r.MinDepth)
	}
	return d, nil
}
