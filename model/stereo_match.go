package model

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"runtime"
	"sync"

	"github.com/parallaxdepth/parallax/sgm"
)

// MatchLevel returns the resolution 1/2^level at which the OpMatch layers
// of a stereo network of config c run the semi-global matcher. Version 1 of
// the stereo architecture matched at half resolution (a quarter of the
// pixels and half the disparities, an eighth of the work); version 2 matches
// at the network's full resolution and pools the result to each layer's
// level. On the real validation pair (testdata/aloe) the full-resolution
// matcher is the more accurate input (see training/stereo/v2/README.md), so
// version 2 is the default.
func (c Config) MatchLevel() int {
	if c.Arch == StereoArchName && c.Version == 1 {
		return 1
	}
	return 0
}

// Matching is the classical estimate of a stereo batch that OpMatch layers
// read: package sgm's semi-global matcher (default options, holes filled
// along the rows) on the pairs and on the mirrored, swapped pairs at
// 1/2^level resolution (Config.MatchLevel). It depends on the images alone, so training
// passes no gradient through it. A Matching is not safe for concurrent use.
// It runs on up to GOMAXPROCS goroutines unless SetMaxProcs bounds it.
type Matching struct {
	n, h, w  int // pairs; size at the match level
	level    int // the match level: 1/2^level of the input's resolution
	maxDisp  int
	slots    []matchSlot // one per match that may run at once
	maxProcs int         // SetMaxProcs
	errs     []error     // per slot, during Compute
	disp     []float32   // 2n × h × w, pixels at the match level, pair-view layout
	valid    []float32   // 1 where the matcher's own check passed, 0 where filled
	computed bool
	// fixed (tests only) makes Compute keep disp and valid as they were
	// set, so that a network runs on a committed match.
	fixed bool
}

// matchSlot holds one running match's grey views, result and matcher (of
// one worker: a slot's memory is made by its first match, whatever the
// timing of the others, so that a stage holds what it is counted to).
type matchSlot struct {
	gl, gr  *image.Gray
	res     sgm.Result
	matcher *sgm.Matcher
}

// newMatchSlot returns a slot for w × h matches with the matcher options o
// (MaxWorkers is set to 1).
func newMatchSlot(w, h int, o sgm.Options) (matchSlot, error) {
	o.MaxWorkers = 1
	m, err := sgm.NewMatcher(&o)
	if err != nil {
		return matchSlot{}, fmt.Errorf("model: matching: %w", err)
	}
	r := image.Rect(0, 0, w, h)
	return matchSlot{gl: image.NewGray(r), gr: image.NewGray(r), matcher: m}, nil
}

// MaxConcurrentMatchBytes bounds the memory that running the 2n matches of
// a Matching side by side may add: each match that runs at once holds its
// own grey pair, result maps and matcher worker (about 280 bytes a pixel
// at the default d_max, 8.6 MiB at 256×128). The matcher parallelises
// each match already; matches side by side also overlap its serial
// phases (filling holes, the conversions here), which counts at small
// sizes. Above the bound the matches run one after another.
const MaxConcurrentMatchBytes = 32 << 20

// matchBytes returns about the bytes one running match holds for h × w
// pixels up to maxDisp: two grey views, sgm's result maps (16 bytes) and
// its worker, per pixel the cost volume and path sums (1 + 2 bytes a level,
// levels padded to 16) and about 17 bytes of maps and rows.
func matchBytes(h, w, maxDisp int) int64 {
	stored := (maxDisp + 1 + 15) &^ 15
	return int64(w*h) * int64(2+16+3*stored+17)
}

// matchSlots returns how many of the 2n matches of n pairs run at once:
// up to GOMAXPROCS, within MaxConcurrentMatchBytes for the matches beyond
// the first.
func matchSlots(n, h, w, maxDisp int) int {
	k := min(2*n, runtime.GOMAXPROCS(0))
	if extra := MaxConcurrentMatchBytes / matchBytes(h, w, maxDisp); int64(k-1) > extra {
		k = int(extra) + 1
	}
	return max(k, 1)
}

// NewMatching prepares the matching of n pairs of full-resolution size
// width × height (multiples of 2^level) whose disparities reach dMax of the
// width, matched at 1/2^level resolution (level 0 or 1, see
// Config.MatchLevel). It returns an error if an argument is out of range.
func NewMatching(n, width, height int, dMax float64, level int) (*Matching, error) {
	if level < 0 || level > 1 {
		return nil, fmt.Errorf("model: matching: level %d (want 0 or 1)", level)
	}
	s := 1 << level
	if n < 1 || width < 2*s || height < 2*s || width%s != 0 || height%s != 0 {
		return nil, fmt.Errorf("model: matching: %d pairs of %dx%d (sides multiples of %d, at least %d)", n, width, height, s, 2*s)
	}
	h, w := height/s, width/s
	if !(dMax > 0 && dMax <= 1) {
		return nil, fmt.Errorf("model: matching: d_max %v must be in (0, 1]", dMax)
	}
	maxDisp := min(int(math.Ceil(dMax*float64(w))), w-1)
	if maxDisp < 1 {
		maxDisp = 1
	}
	k := matchSlots(n, h, w, maxDisp)
	slots := make([]matchSlot, k)
	for i := range slots {
		var err error
		if slots[i], err = newMatchSlot(w, h, sgm.Options{MaxDisparity: maxDisp}); err != nil {
			return nil, err
		}
	}
	return &Matching{n: n, h: h, w: w, level: level, maxDisp: maxDisp, slots: slots,
		errs: make([]error, k), disp: make([]float32, 2*n*h*w), valid: make([]float32, 2*n*h*w)}, nil
}

// SetMaxProcs bounds the goroutines Compute uses to n, the caller's
// included (0 means GOMAXPROCS, the default): it runs up to n matches side
// by side, within n goroutines together, so that training leaves the other
// cores to whatever runs beside it (train.Session.SetWorkers). The results
// are the same bits for any n. It returns an error for a negative n.
func (m *Matching) SetMaxProcs(n int) error {
	if n < 0 {
		return fmt.Errorf("model: matching: max procs %d must not be negative", n)
	}
	if n == m.maxProcs {
		return nil
	}
	// sgm.Options.MaxProcs is fixed per Matcher: new ones, whose workers
	// are made again on the next Compute.
	procs := 0
	if n > 0 {
		procs = n / min(len(m.slots), n)
	}
	slots := make([]*sgm.Matcher, len(m.slots))
	for i := range m.slots {
		o := m.slots[i].matcher.Options()
		o.MaxProcs = procs
		var err error
		if slots[i], err = sgm.NewMatcher(&o); err != nil {
			return fmt.Errorf("model: matching: %w", err)
		}
	}
	for i := range m.slots {
		m.slots[i].matcher = slots[i]
	}
	m.maxProcs = n
	return nil
}

// Invalidate marks the matching stale: the next Compute runs the matcher.
func (m *Matching) Invalidate() { m.computed = false }

// Compute runs the matcher on pairs, 2n full-resolution RGB images (the n
// left views then the n right views, as a stereo network's input), unless it
// has run since the last Invalidate.
func (m *Matching) Compute(pairs []float32) error {
	if m.computed || m.fixed {
		return nil
	}
	s := 1 << m.level
	H, W := m.h*s, m.w*s
	img := 3 * H * W
	if len(pairs) != 2*m.n*img {
		return fmt.Errorf("model: matching: %d input values, want %d", len(pairs), 2*m.n*img)
	}
	// Match j is pair j mod n, mirrored and swapped for j ≥ n: its
	// results go to plane j of the pair-view layout, whichever slot runs
	// it, so the outcome does not depend on the number of slots.
	jobs := 2 * m.n
	slots := len(m.slots)
	if m.maxProcs > 0 {
		slots = min(slots, m.maxProcs)
	}
	if slots == 1 {
		for j := range jobs {
			if err := m.matchOne(&m.slots[0], pairs, j, H, W, s); err != nil {
				return err
			}
		}
		m.computed = true
		return nil
	}
	// Slot k runs matches k, k + slots, …: each slot in use runs one at
	// least (slots ≤ 2n) and so makes its memory, as the stage's count has
	// it (with SetMaxProcs below the slots, the slots beyond it stay unmade).
	var wg sync.WaitGroup
	if len(m.errs) < slots {
		m.errs = make([]error, slots)
	}
	errs := m.errs[:slots]
	clear(errs)
	for k := range slots {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for j := k; j < jobs; j += slots {
				if errs[k] = m.matchOne(&m.slots[k], pairs, j, H, W, s); errs[k] != nil {
					return
				}
			}
		}()
	}
	wg.Wait()
	if err := errors.Join(errs...); err != nil {
		return err
	}
	m.computed = true
	return nil
}

// matchOne runs match j of Compute (see there) in slot sl.
func (m *Matching) matchOne(sl *matchSlot, pairs []float32, j, H, W, s int) error {
	img := 3 * H * W
	i, mirror := j%m.n, j >= m.n
	left, right := pairs[i*img:(i+1)*img], pairs[(m.n+i)*img:(m.n+i+1)*img]
	// The mirrored, swapped pair: mirror(right) is its left view.
	a, b := left, right
	if mirror {
		a, b = right, left
	}
	greyBlocks(sl.gl, a, H, W, s, mirror)
	greyBlocks(sl.gr, b, H, W, s, mirror)
	if err := sl.matcher.MatchInto(context.Background(), &sl.res, sl.gl, sl.gr); err != nil {
		return fmt.Errorf("model: matching: %w", err)
	}
	plane := m.h * m.w
	disp, valid := m.disp[j*plane:(j+1)*plane], m.valid[j*plane:(j+1)*plane]
	d := sl.res.Disparity
	for y := range m.h {
		for x := range m.w {
			valid[y*m.w+x] = float32(d.Mask[y*d.Stride+x])
		}
	}
	if _, err := sgm.FillHoles(d); err != nil {
		return fmt.Errorf("model: matching: %w", err)
	}
	for y := range m.h {
		for x := range m.w {
			v := d.Pix[y*d.Stride+x]
			if d.Mask[y*d.Stride+x] == 0 {
				v = 0
			}
			disp[y*m.w+x] = v
		}
	}
	return nil
}

// greyBlocks writes the 8-bit grey image (luma weights 0.299, 0.587, 0.114,
// ITU-R BT.601, as color.GrayModel) of the s×s block means of rgb (3 × H × W
// in [0, 1]), mirrored if asked.
func greyBlocks(dst *image.Gray, rgb []float32, H, W, s int, mirror bool) {
	if s != 1 {
		greyMeans(dst, rgb, H, W, s, mirror)
		return
	}
	// greyMeans' arithmetic for one-pixel blocks (a sum of one value is
	// that value; the mean divides by 1), without its loops over blocks.
	p := H * W
	r, g, b := rgb[:p], rgb[p:2*p], rgb[2*p:3*p]
	for y := range H {
		row := dst.Pix[y*dst.Stride : y*dst.Stride+W]
		for x := range W {
			i := y*W + x
			var v float32
			v += 0.299 * r[i]
			v += 0.587 * g[i]
			v += 0.114 * b[i]
			xo := x
			if mirror {
				xo = W - 1 - x
			}
			row[xo] = uint8(min(max(math.Round(float64(v)*255), 0), 255))
		}
	}
}

// greyMeans is greyBlocks for any block size s.
func greyMeans(dst *image.Gray, rgb []float32, H, W, s int, mirror bool) {
	h, w := H/s, W/s
	p := H * W
	inv := 1 / float64(s*s)
	for y := range h {
		for x := range w {
			var v float32
			for c, k := range [3]float32{0.299, 0.587, 0.114} {
				var sum float32
				for yy := s * y; yy < s*(y+1); yy++ {
					o := c*p + yy*W + s*x
					for xx := range s {
						sum += rgb[o+xx]
					}
				}
				v += k * sum
			}
			g := math.Round(float64(v) * inv * 255)
			xo := x
			if mirror {
				xo = w - 1 - x
			}
			dst.Pix[y*dst.Stride+xo] = uint8(min(max(g, 0), 255))
		}
	}
}

// Pool writes the matching at resolution 1/2^level (level ≥ the match level) into
// dst, 2n × c × H/2^level × W/2^level, as means over each block. With c = 2,
// channel 0 is the disparity in pixels at that resolution and channel 1 the
// fraction of the block the matcher found without filling; with c = 1, the
// disparity as a fraction of the width.
func (m *Matching) Pool(dst []float32, level, c int) {
	f := 1 << (level - m.level)
	h, w := m.h/f, m.w/f
	inv := 1 / float32(f*f)
	unit := 1 / float32(f) // pixels at the match level → at this level
	if c == 1 {
		unit = 1 / float32(m.w)
	}
	for b := range 2 * m.n {
		src, val := m.disp[b*m.h*m.w:(b+1)*m.h*m.w], m.valid[b*m.h*m.w:(b+1)*m.h*m.w]
		od := dst[(c*b)*h*w : (c*b+1)*h*w]
		for y := range h {
			for x := range w {
				var sd, sv float32
				for yy := y * f; yy < (y+1)*f; yy++ {
					for xx := x * f; xx < (x+1)*f; xx++ {
						sd += src[yy*m.w+xx]
						sv += val[yy*m.w+xx]
					}
				}
				od[y*w+x] = sd * inv * unit
				if c == 2 {
					dst[(2*b+1)*h*w+y*w+x] = sv * inv
				}
			}
		}
	}
}
