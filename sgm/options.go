package sgm

import (
	"cmp"
	"fmt"
	"math"
	"runtime"

	"github.com/parallaxdepth/parallax/depth"
)

// Off disables an option whose zero value means its default: set
// Options.Uniqueness, LRTolerance, SpeckleSize or P2Falloff to Off.
const Off = -1

// Defaults of Options, chosen on the project's synthetic greenhouse pairs
// with testdata/sgm/tune (never on the Motorcycle pair the tests report).
const (
	DefaultMaxDisparity = 63
	DefaultCensusWidth  = 9
	DefaultCensusHeight = 7
	DefaultP1           = 7
	DefaultP2           = 80
	DefaultP2Falloff    = 16
	DefaultPaths        = 4
	DefaultUniqueness   = 3
	DefaultLRTolerance  = 1
	DefaultSpeckleSize  = 150
	DefaultSpeckleJump  = 1
)

// Limits on Options and inputs.
const (
	// MaxDisparityLevels bounds MaxDisparity − MinDisparity + 1.
	MaxDisparityLevels = 1024
	// MaxCells bounds width × height × disparity levels (rounded up to a
	// multiple of 16) of one call: a little over 3 bytes per cell are
	// allocated (see the package doc, Memory).
	MaxCells = 1 << 30
)

// Options configures a Matcher. A nil *Options means the defaults; a zero
// field means its documented default.
type Options struct {
	// MinDisparity is the smallest disparity searched, pixels, ≥ 0.
	// Default 0.
	MinDisparity int
	// MaxDisparity is the largest disparity searched, pixels. If 0 it
	// comes from Rig: the disparity of Rig.MinDepth at the image's width,
	// rounded up (the rig is rescaled to each image's width as
	// depth.Rig.Scaled does); without a Rig it is DefaultMaxDisparity.
	MaxDisparity int
	// Rig, if not nil, gives MaxDisparity when that is 0. Its MinDepth
	// must be positive. The Matcher keeps a copy.
	Rig *depth.Rig

	// CensusWidth and CensusHeight are the census window, odd, with at
	// most 65 pixels (64 comparisons). Defaults 9 and 7.
	CensusWidth, CensusHeight int

	// P1 is the penalty for a disparity change of one pixel between
	// neighbours along a path, and P2 for a larger change, in Hamming
	// bits of the census cost. Defaults 7 and 80. P2 must exceed P1.
	P1, P2 int
	// P2Falloff adapts P2 to the image: between neighbours whose grey
	// levels (0–255) differ by g, the large-jump penalty is
	// max(P1+1, P2·F/(F+g)) with F = P2Falloff, so that disparity may
	// jump more easily at intensity edges. Off keeps P2 constant.
	// Default 16.
	P2Falloff float64
	// Paths is the number of aggregation directions: 4 (horizontal and
	// vertical) or 8 (and diagonal). Default 4: on the synthetic pairs
	// the diagonals did not improve the result and cost twice the time.
	Paths int

	// Uniqueness, in percent, marks a pixel invalid unless every disparity
	// more than one pixel away from the best costs more than
	// (1 + Uniqueness/100) times the best. Off disables. Default 3.
	Uniqueness float64
	// LRTolerance marks a pixel invalid when its disparity and the right
	// view's disparity at the matched pixel differ by more than this many
	// pixels (integer disparities). Off disables. Default 1.
	LRTolerance int
	// SpeckleSize removes (marks invalid) connected regions of fewer than
	// this many pixels, where 4-neighbours belong to one region when their
	// disparities differ by at most SpeckleJump pixels. Off disables.
	// Defaults 150 and 1.
	SpeckleSize int
	SpeckleJump float64
	// MinTexture marks invalid the pixels whose census window is nearly
	// flat: where the mean absolute difference between horizontally
	// adjacent grey levels (0–255) in the window is below MinTexture.
	// Default 0: no such check (on the synthetic pairs any threshold
	// removed more right disparities than wrong ones).
	MinTexture float64
	// FillHoles fills every invalid pixel along its row with the smaller of
	// the nearest valid disparities to its left and right (see FillHoles).
	// Filled pixels are valid with confidence 0.
	FillHoles bool

	// MaxWorkers bounds the calls that run at once; each holds its own
	// buffers. Default runtime.GOMAXPROCS(0). Every call also spreads its
	// work over up to MaxProcs goroutines.
	MaxWorkers int
	// MaxProcs bounds the goroutines each call spreads its work over, its
	// caller's included, so that matching can leave cores to other work.
	// Default 0: runtime.GOMAXPROCS(0) (also the most it uses). The
	// result is the same bits for any MaxProcs.
	MaxProcs int
}

// resolve returns o with defaults filled in, or an error naming a field out
// of range.
func (o Options) resolve() (Options, error) {
	if o.MinDisparity < 0 {
		return o, fmt.Errorf("sgm: MinDisparity %d must not be negative", o.MinDisparity)
	}
	if o.Rig != nil {
		if err := o.Rig.Validate(); err != nil {
			return o, fmt.Errorf("sgm: rig: %w", err)
		}
		if o.MaxDisparity == 0 && !(o.Rig.MinDepth > 0) {
			return o, fmt.Errorf("sgm: the rig's minimum depth %v must be positive to bound the disparity", o.Rig.MinDepth)
		}
		r := *o.Rig
		o.Rig = &r
	}
	if o.MaxDisparity == 0 && o.Rig == nil {
		o.MaxDisparity = DefaultMaxDisparity
	}
	if o.MaxDisparity < 0 {
		return o, fmt.Errorf("sgm: MaxDisparity %d must not be negative", o.MaxDisparity)
	}
	if o.MaxDisparity != 0 {
		if o.MaxDisparity < o.MinDisparity {
			return o, fmt.Errorf("sgm: MaxDisparity %d is below MinDisparity %d", o.MaxDisparity, o.MinDisparity)
		}
		if o.MaxDisparity-o.MinDisparity+1 > MaxDisparityLevels {
			return o, fmt.Errorf("sgm: disparity range [%d, %d] has more than %d levels", o.MinDisparity, o.MaxDisparity, MaxDisparityLevels)
		}
	}
	o.CensusWidth = cmp.Or(o.CensusWidth, DefaultCensusWidth)
	o.CensusHeight = cmp.Or(o.CensusHeight, DefaultCensusHeight)
	cw, ch := o.CensusWidth, o.CensusHeight
	if cw < 1 || ch < 1 || cw%2 == 0 || ch%2 == 0 || cw > 65 || ch > 65 || cw*ch > 65 || cw*ch < 2 {
		return o, fmt.Errorf("sgm: census window %dx%d must have odd sides and 2 to 65 pixels", cw, ch)
	}
	o.P1 = cmp.Or(o.P1, DefaultP1)
	o.P2 = cmp.Or(o.P2, DefaultP2)
	o.Paths = cmp.Or(o.Paths, DefaultPaths)
	if o.Paths != 4 && o.Paths != 8 {
		return o, fmt.Errorf("sgm: Paths %d must be 4 or 8", o.Paths)
	}
	costMax := cw*ch - 1
	// Each path's cost is at most costMax + P2, and the sum over paths
	// must fit in 16 bits below noPath.
	p2Max := (noPath-1)/o.Paths - costMax
	if o.P1 < 0 || o.P2 <= o.P1 || o.P2 > p2Max {
		return o, fmt.Errorf("sgm: penalties P1 %d and P2 %d must satisfy 0 ≤ P1 < P2 ≤ %d", o.P1, o.P2, p2Max)
	}
	if defaultOrOff(&o.P2Falloff, DefaultP2Falloff) && (!(o.P2Falloff > 0) || math.IsInf(o.P2Falloff, 0)) {
		return o, fmt.Errorf("sgm: P2Falloff %v must be positive and finite, or Off", o.P2Falloff)
	}
	if defaultOrOff(&o.Uniqueness, DefaultUniqueness) && (!(o.Uniqueness > 0) || o.Uniqueness > 1000) {
		return o, fmt.Errorf("sgm: Uniqueness %v must be in (0, 1000] percent, or Off", o.Uniqueness)
	}
	if defaultOrOff(&o.LRTolerance, DefaultLRTolerance) && o.LRTolerance < 0 {
		return o, fmt.Errorf("sgm: LRTolerance %d must be positive, or Off", o.LRTolerance)
	}
	if defaultOrOff(&o.SpeckleSize, DefaultSpeckleSize) && o.SpeckleSize < 0 {
		return o, fmt.Errorf("sgm: SpeckleSize %d must be positive, or Off", o.SpeckleSize)
	}
	o.SpeckleJump = cmp.Or(o.SpeckleJump, DefaultSpeckleJump)
	if !(o.SpeckleJump > 0) || math.IsInf(o.SpeckleJump, 0) {
		return o, fmt.Errorf("sgm: SpeckleJump %v must be positive and finite", o.SpeckleJump)
	}
	if o.MinTexture == Off {
		o.MinTexture = 0
	}
	if !(o.MinTexture >= 0) || o.MinTexture > 255 {
		return o, fmt.Errorf("sgm: MinTexture %v must be in [0, 255]", o.MinTexture)
	}
	o.MaxWorkers = cmp.Or(o.MaxWorkers, runtime.GOMAXPROCS(0))
	if o.MaxWorkers < 0 || o.MaxWorkers > 1024 {
		return o, fmt.Errorf("sgm: MaxWorkers %d must be in [1, 1024]", o.MaxWorkers)
	}
	if o.MaxProcs < 0 {
		return o, fmt.Errorf("sgm: MaxProcs %d must not be negative", o.MaxProcs)
	}
	return o, nil
}

// disparityRange returns the disparities [lo, hi] searched in an image
// width pixels wide.
func (o *Options) disparityRange(width int) (lo, hi int, err error) {
	lo, hi = o.MinDisparity, o.MaxDisparity
	if hi == 0 {
		px, ok := o.Rig.PixelsFromDepth(o.Rig.MinDepth)
		if !ok {
			return 0, 0, fmt.Errorf("sgm: the rig gives no positive disparity at its minimum depth %v m", o.Rig.MinDepth)
		}
		d := math.Ceil(px * float64(width) / float64(o.Rig.Width))
		if !(d < MaxDisparityLevels+float64(lo)) {
			return 0, 0, fmt.Errorf("sgm: the rig's minimum depth %v m gives a disparity of %v px at width %d, more than %d levels", o.Rig.MinDepth, d, width, MaxDisparityLevels)
		}
		hi = int(d)
		if hi < lo {
			return 0, 0, fmt.Errorf("sgm: the rig's largest disparity %d px at width %d is below MinDisparity %d", hi, width, lo)
		}
	}
	if lo >= width {
		return 0, 0, fmt.Errorf("sgm: MinDisparity %d leaves no pixel to match in an image %d pixels wide", lo, width)
	}
	return lo, hi, nil
}

// defaultOrOff sets *v to def when it is 0 and says whether *v is left to
// validate: not the default, and not Off.
func defaultOrOff[T int | float64](v *T, def T) bool {
	switch *v {
	case 0:
		*v = def
		return false
	case Off:
		return false
	}
	return true
}
