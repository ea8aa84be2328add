package sgm

import (
	"context"
	"errors"
	"fmt"
	"image"
	"math"
	"runtime"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/parallel"
	"github.com/parallaxdepth/parallax/planar"
)

// Result is the output of Matcher.Match for one rectified pair, with the
// bounds of the left image.
type Result struct {
	// Disparity is the left view's disparity in pixels: left column x
	// matches right column x − d. Pixels that fail a check are invalid.
	Disparity *depth.Disparity
	// Confidence is valid at every pixel: (c₂ − c₁)/c₂ in [0, 1], where c₁
	// is the best aggregated cost and c₂ the best one more than a pixel
	// away from it; 0 where the disparity is invalid or was filled.
	Confidence *depth.Confidence
}

// Matcher computes disparity from rectified stereo pairs by semi-global
// matching. It is safe for concurrent use: each call borrows a worker (its
// buffers) from a pool of at most Options.MaxWorkers and returns it, so
// calls beyond MaxWorkers wait, or give up when their context ends.
type Matcher struct {
	opt  Options
	pool *parallel.Pool[worker]
}

// NewMatcher returns a Matcher with the options opt (nil means the
// defaults), or an error naming an option out of range.
func NewMatcher(opt *Options) (*Matcher, error) {
	var o Options
	if opt != nil {
		o = *opt
	}
	o, err := o.resolve()
	if err != nil {
		return nil, err
	}
	return &Matcher{opt: o, pool: parallel.NewPool[worker](o.MaxWorkers)}, nil
}

// Options returns the Matcher's options with every default filled in.
func (m *Matcher) Options() Options {
	o := m.opt
	if o.Rig != nil {
		r := *o.Rig
		o.Rig = &r
	}
	return o
}

// Range returns the disparities [lo, hi], in pixels, that the Matcher
// searches in an image width pixels wide, or an error if that width leaves
// nothing to search.
func (m *Matcher) Range(width int) (lo, hi int, err error) {
	return m.opt.disparityRange(width)
}

// Match computes the left view's disparity and its confidence for the
// rectified pair left, right (equal sizes; colour images are converted to
// grey). It returns an error if an image is nil, empty, too large or the
// sizes differ, if the disparity range does not fit the image, or if ctx
// ends while waiting for a worker.
func (m *Matcher) Match(ctx context.Context, left, right image.Image) (*Result, error) {
	var r Result
	if err := m.MatchInto(ctx, &r, left, right); err != nil {
		return nil, err
	}
	return &r, nil
}

// MatchInto is Match writing into dst. Its maps are reused when their
// bounds equal the left image's (Rect, with Stride ≥ width); otherwise, or
// if nil, new ones are allocated. With reused maps a call does not allocate
// in steady state for *image.Gray, *image.RGBA, *image.NRGBA and
// *image.YCbCr inputs.
func (m *Matcher) MatchInto(ctx context.Context, dst *Result, left, right image.Image) error {
	if dst == nil {
		return errors.New("sgm: MatchInto: nil result")
	}
	b, err := checkPair(left, right)
	if err != nil {
		return err
	}
	lo, hi, err := m.opt.disparityRange(b.Dx())
	if err != nil {
		return err
	}
	levels := hi - lo + 1
	padded := (levels + 15) &^ 15
	if cells := int64(b.Dx()) * int64(b.Dy()) * int64(padded); cells > MaxCells {
		return fmt.Errorf("sgm: %dx%d pixels with %d disparity levels exceed %d cells", b.Dx(), b.Dy(), levels, MaxCells)
	}
	if dst.Disparity == nil || !fits(&dst.Disparity.Map, b) {
		if dst.Disparity, err = depth.NewDisparity(b); err != nil {
			return fmt.Errorf("sgm: %w", err)
		}
	}
	if dst.Confidence == nil || !fits(&dst.Confidence.Map, b) {
		if dst.Confidence, err = depth.NewConfidence(b); err != nil {
			return fmt.Errorf("sgm: %w", err)
		}
	}
	if err := ctx.Err(); err != nil {
		return fmt.Errorf("sgm: %w", err)
	}
	wk, err := m.acquire(ctx)
	if err != nil {
		return err
	}
	defer m.release(wk)
	wk.run(left, right, lo, levels, dst)
	return nil
}

// fits reports whether m can hold a map with bounds b.
func fits(m *depth.Map, b image.Rectangle) bool {
	return m.Rect == b && m.Stride >= b.Dx() && len(m.Pix) >= (b.Dy()-1)*m.Stride+b.Dx() && len(m.Mask) >= (b.Dy()-1)*m.Stride+b.Dx()
}

// checkPair returns the left image's bounds, or an error for a nil, empty or
// oversized image or unequal sizes.
func checkPair(left, right image.Image) (image.Rectangle, error) {
	for _, s := range []struct {
		name string
		img  image.Image
	}{{"left", left}, {"right", right}} {
		if s.img == nil {
			return image.Rectangle{}, fmt.Errorf("sgm: %s image is nil", s.name)
		}
		b := s.img.Bounds()
		if b.Empty() {
			return image.Rectangle{}, fmt.Errorf("sgm: %s image is empty (bounds %v)", s.name, b)
		}
		if w, h := b.Dx(), b.Dy(); w > planar.MaxSide || h > planar.MaxSide || w*h > planar.MaxPixels {
			return image.Rectangle{}, fmt.Errorf("sgm: %s image is %dx%d, larger than %d pixels a side or %d pixels", s.name, w, h, planar.MaxSide, planar.MaxPixels)
		}
	}
	lb, rb := left.Bounds(), right.Bounds()
	if lb.Size() != rb.Size() {
		return image.Rectangle{}, fmt.Errorf("sgm: left image is %dx%d and right image %dx%d: a rectified pair has equal sizes", lb.Dx(), lb.Dy(), rb.Dx(), rb.Dy())
	}
	return lb, nil
}

func (m *Matcher) acquire(ctx context.Context) (*worker, error) {
	wk, err := m.pool.Get(ctx, func() *worker { return newWorker(&m.opt) })
	if err != nil {
		return nil, fmt.Errorf("sgm: waiting for a worker: %w", err)
	}
	return wk, nil
}

func (m *Matcher) release(wk *worker) { m.pool.Put(wk) }

// Parallel work is split by the problem's size only.
const (
	maxRowRanges = 16        // ranges of rows in the row-wise phases (each holds a row of path vectors)
	bandLines    = 64        // path lines per range in the vertical and diagonal phases
	rowGroup     = 4         // rows whose horizontal paths advance together, at most (at least 2: select's scratch)
	groupBytes   = 768 << 10 // a group's costs, sums and vectors: fewer rows if they would not stay in a core's cache
)

// worker holds one call's buffers, grown as needed and reused.
type worker struct {
	opt *Options

	// The current call.
	w, h      int
	lo, n     int // first disparity, levels searched
	np        int // levels stored per pixel: n rounded up to a multiple of 16
	costMax   uint8
	p1        uint16
	p2        [256]uint16 // large-jump penalty by grey-level difference
	shear     int         // of the band phase running
	lineOff   int
	dst       *Result
	disp      []float32 // w×h, the disparity before it is written to dst
	valid     []uint8
	conf      []float32
	greyL     []uint8
	greyR     []uint8
	padL      []uint8
	padR      []uint8
	sets      chan int // the free sets of row scratch (the buffers "per set", one set per range running)
	cens      []uint64 // per set: the census words of a row of each image, 2×w
	censusAcc []uint8  // per set: 8×w
	texPre    []int32  // per row of the left image: prefix sums of |Δx grey|, w+1 each (with MinTexture only)
	cost      []uint8  // w×h×np
	sum       []uint16 // w×h×np: the vertical (and diagonal) paths' sums
	rowSum    []uint16 // per set: group rows of w×np, the sums with the horizontal paths
	rowGrain  int      // rows per range of the row-wise phases
	group     int      // rows whose horizontal paths advance together: 2 … rowGroup
	rowVec    []uint16 // per set: group×w path vectors
	rowMin    []uint16 // per set: group×w minima
	rowP2     []uint16 // per set: group×w penalties
	rowInt    []int32  // per set: 2×w
	slide     []uint16 // per set: 2 vectors for the right view's winners
	rev       []uint64 // per set: 2w+np census words of a right row, reversed
	lineVec   []uint16 // 2 (alternating rows) × lines path vectors
	lineMin   []uint16 // 2 × lines minima
	lineP2    []uint16 // per line: the penalty of its current step (diagonals)
	vertP2    []uint16 // w×h: the penalty between each pixel and the one above it
	speckles  speckleScratch

	left, right image.Image // during the grey conversion

	// inPlace (tests) adds the horizontal paths into sum, which then holds
	// the final sums, instead of into rowSum.
	inPlace bool

	greyFn, censusFn, rowFn, bandFn, writeFn func(lo, hi int)
}

func newWorker(o *Options) *worker {
	wk := &worker{opt: o}
	wk.greyFn = wk.greyRange
	wk.censusFn = wk.censusRange
	wk.rowFn = wk.rowRange
	wk.bandFn = wk.bandRange
	wk.writeFn = wk.writeRange
	return wk
}

func grow[T any](s []T, n int) []T {
	if cap(s) < n {
		return make([]T, n)
	}
	return s[:n]
}

// run matches one pair whose sizes and range were checked.
func (wk *worker) run(left, right image.Image, lo, levels int, dst *Result) {
	o := wk.opt
	b := left.Bounds()
	w, h := b.Dx(), b.Dy()
	wk.w, wk.h, wk.lo, wk.n = w, h, lo, levels
	wk.np = (levels + 15) &^ 15
	wk.dst = dst
	cw, ch := o.CensusWidth, o.CensusHeight
	wk.costMax = uint8(cw*ch - 1)
	wk.p1 = uint16(o.P1)
	for g := range wk.p2 {
		p := float64(o.P2)
		if o.P2Falloff != Off {
			p = math.Round(p * o.P2Falloff / (o.P2Falloff + float64(g)))
		}
		wk.p2[g] = uint16(max(p, float64(o.P1+1)))
	}
	wh := w * h
	wk.greyL, wk.greyR = grow(wk.greyL, wh), grow(wk.greyR, wh)
	npad := (w + cw - 1) * (h + ch - 1)
	wk.padL, wk.padR = grow(wk.padL, npad), grow(wk.padR, npad)
	if o.MinTexture > 0 {
		wk.texPre = grow(wk.texPre, h*(w+1))
	}
	wk.cost = grow(wk.cost, wh*wk.np)
	wk.sum = grow(wk.sum, wh*wk.np)
	vs := wk.np + vecPad
	wk.rowGrain = max(4, (h+maxRowRanges-1)/maxRowRanges)
	// One set of row scratch for each range that can run at once.
	procs := runtime.GOMAXPROCS(0)
	if o.MaxProcs > 0 {
		procs = min(procs, o.MaxProcs)
	}
	sets := min((h+wk.rowGrain-1)/wk.rowGrain, procs)
	if cap(wk.sets) != sets {
		wk.sets = make(chan int, sets)
		for k := range sets {
			wk.sets <- k
		}
	}
	wk.group = rowGroup
	for wk.group > 2 && wk.group*w*(5*wk.np+2*vs) > groupBytes {
		wk.group /= 2
	}
	wk.rowVec = grow(wk.rowVec, sets*wk.group*w*vs)
	initSentinels(wk.rowVec, wk.np)
	wk.rowMin = grow(wk.rowMin, sets*wk.group*w)
	wk.rowP2 = grow(wk.rowP2, sets*wk.group*w)
	wk.rowInt = grow(wk.rowInt, sets*2*w)
	wk.slide = grow(wk.slide, sets*2*vs)
	wk.rev = grow(wk.rev, sets*(2*w+wk.np))
	wk.censusAcc = grow(wk.censusAcc, sets*8*w)
	wk.cens = grow(wk.cens, sets*2*w)
	wk.rowSum = grow(wk.rowSum, sets*wk.group*w*wk.np)
	lines := w + h - 1
	wk.lineVec = grow(wk.lineVec, 2*lines*vs)
	initSentinels(wk.lineVec, wk.np)
	wk.lineMin = grow(wk.lineMin, 2*lines)
	wk.lineP2 = grow(wk.lineP2, lines)
	wk.vertP2 = grow(wk.vertP2, wh)
	wk.disp, wk.valid, wk.conf = grow(wk.disp, wh), grow(wk.valid, wh), grow(wk.conf, wh)

	wk.left, wk.right = left, right
	parallel.ForN(wk.opt.MaxProcs, 2*h, wk.rowGrain, wk.greyFn)
	wk.left, wk.right = nil, nil
	parallel.ForN(wk.opt.MaxProcs, h, wk.rowGrain, wk.censusFn)
	wk.band(0)
	if o.Paths == 8 {
		wk.band(1)
		wk.band(-1)
	}
	if o.SpeckleSize != Off {
		wk.speckles.reset(wh)
	}
	parallel.ForN(wk.opt.MaxProcs, h, wk.rowGrain, wk.rowFn)
	if o.SpeckleSize != Off {
		for y := wk.rowGrain; y < h; y += wk.rowGrain {
			wk.speckles.merge(wk.disp, wk.valid, w, y, float32(o.SpeckleJump))
		}
	}
	parallel.ForN(wk.opt.MaxProcs, h, wk.rowGrain, wk.writeFn)
}

// writeRange finishes rows [lo, hi): the speckle sweep, the hole fill, and
// the copy of the disparity, validity and confidence into dst.
func (wk *worker) writeRange(lo, hi int) {
	w, o := wk.w, wk.opt
	if o.SpeckleSize != Off {
		wk.speckles.sweep(wk.valid, w, lo, hi, o.SpeckleSize)
	}
	if o.FillHoles {
		for y := lo; y < hi; y++ {
			fillRow(wk.disp[y*w:(y+1)*w], wk.valid[y*w:(y+1)*w], filled)
		}
	}
	d, c := wk.dst.Disparity, wk.dst.Confidence
	for y := lo; y < hi; y++ {
		dp, dm := d.Pix[y*d.Stride:y*d.Stride+w], d.Mask[y*d.Stride:y*d.Stride+w]
		cp, cm := c.Pix[y*c.Stride:y*c.Stride+w], c.Mask[y*c.Stride:y*c.Stride+w]
		disp, valid, conf := wk.disp[y*w:(y+1)*w], wk.valid[y*w:(y+1)*w], wk.conf[y*w:(y+1)*w]
		for x, v := range disp {
			cm[x] = 1
			if valid[x] == 0 || !(v > 0) {
				dp[x], dm[x], cp[x] = 0, 0, 0
				continue
			}
			dp[x], dm[x] = v, 1
			if valid[x] == filled {
				cp[x] = 0
			} else {
				cp[x] = conf[x]
			}
		}
	}
}

// padRow writes the rows of pad, the w×h image g with a border of half the
// census window on each side repeating the edge pixels, that come from row
// y of g: its own, and the border rows above or below at the first or last
// row.
func padRow(pad, g []uint8, w, h, cw, ch, y int) {
	rx, ry := cw/2, ch/2
	pw := w + 2*rx
	src := g[y*w : (y+1)*w]
	p0, p1 := y+ry, y+ry+1
	if y == 0 {
		p0 = 0
	}
	if y == h-1 {
		p1 = h + 2*ry
	}
	for py := p0; py < p1; py++ {
		row := pad[py*pw : (py+1)*pw]
		for x := range rx {
			row[x] = src[0]
			row[rx+w+x] = src[w-1]
		}
		copy(row[rx:rx+w], src)
	}
}

// greyRange converts rows [lo, hi) of the stacked left (rows 0 … h−1) and
// right (h … 2h−1) images to grey, and pads them for the census.
func (wk *worker) greyRange(lo, hi int) {
	w, h := wk.w, wk.h
	for r := lo; r < hi; r++ {
		img, dst, pad, y := wk.left, wk.greyL, wk.padL, r
		if r >= h {
			img, dst, pad, y = wk.right, wk.greyR, wk.padR, r-h
		}
		greyRow(dst[y*w:(y+1)*w], img, y)
		padRow(pad, dst, w, h, wk.opt.CensusWidth, wk.opt.CensusHeight, y)
	}
}

// censusRange computes the census rows [lo, hi) of both images, the rows'
// matching costs and the penalties between each row and the one above.
func (wk *worker) censusRange(lo, hi int) {
	w, np := wk.w, wk.np
	cw, ch := wk.opt.CensusWidth, wk.opt.CensusHeight
	ri := <-wk.sets
	defer func() { wk.sets <- ri }()
	acc := wk.censusAcc[ri*8*w : (ri+1)*8*w]
	for y := lo; y < hi; y++ {
		cl, cr := wk.cens[2*ri*w:(2*ri+1)*w], wk.cens[(2*ri+1)*w:(2*ri+2)*w]
		censusRow(cl, wk.padL, w, cw, ch, y, acc)
		censusRow(cr, wk.padR, w, cw, ch, y, acc)
		costRow(wk.cost[y*w*np:(y+1)*w*np], cl, cr, w, wk.lo, wk.n, np, wk.costMax, wk.rev[ri*(2*w+np):(ri+1)*(2*w+np)])
		g := wk.greyL[y*w : (y+1)*w]
		if y > 0 {
			gp, p2 := wk.greyL[(y-1)*w:y*w], wk.vertP2[y*w:(y+1)*w]
			for x := range p2 {
				p2[x] = wk.p2[absDiff(g[x], gp[x])]
			}
		}
		if wk.opt.MinTexture == 0 {
			continue
		}
		pre := wk.texPre[y*(w+1) : (y+1)*(w+1)]
		pre[0] = 0
		for x := range w - 1 {
			pre[x+1] = pre[x] + int32(absDiff(g[x+1], g[x]))
		}
		pre[w] = pre[w-1]
	}
}

// rowRange finishes rows [lo, hi), wk.group rows at a time: it adds the
// two horizontal paths to the rows' sums from the other paths, in rows of
// scratch (or in sum itself, with inPlace), the rows' paths advancing
// together one pixel a round so that the kernel has that many independent
// vectors at a time, and selects the rows' disparities from them; then it
// labels the range's speckle regions (speckle.go).
func (wk *worker) rowRange(lo, hi int) {
	w, np := wk.w, wk.np
	vs := np + vecPad
	R := wk.group
	ri := <-wk.sets
	defer func() { wk.sets <- ri }()
	vecs := wk.rowVec[ri*R*w*vs : (ri+1)*R*w*vs] // pixel x of row r at (x·R + r)·vs
	mins := wk.rowMin[ri*R*w : (ri+1)*R*w]       // at x·R + r
	p2 := wk.rowP2[ri*R*w : (ri+1)*R*w]          // at x·R + r: between pixels x−1 and x
	for y0 := lo; y0 < hi; y0 += R {
		rr := min(R, hi-y0)
		cost := wk.cost[y0*w*np : (y0+rr)*w*np]
		base := wk.sum[y0*w*np : (y0+rr)*w*np]
		sum := base
		if !wk.inPlace {
			sum = wk.rowSum[ri*R*w*np : (ri*R+rr)*w*np]
		}
		for r := range rr {
			g := wk.greyL[(y0+r)*w : (y0+r+1)*w]
			for x := 1; x < w; x++ {
				p2[x*R+r] = wk.p2[absDiff(g[x], g[x-1])]
			}
			o := r * w * np
			mins[r] = pathStart(vecs[r*vs:], cost[o:o+np], sum[o:o+np], base[o:o+np])
		}
		if w > 1 {
			run := pathRun{cur: vecs, prev: vecs, curOff: R * vs, curStep: vs, curOuter: R * vs, prevOff: 0, prevStep: vs, prevOuter: R * vs,
				cost: cost, sum: sum, base: base, costOff: np, costStep: w * np, costOuter: np, p2: p2, p2Off: R, p2Outer: R,
				pmin: mins, cmin: mins, pminOff: 0, pminStep: 1, pminOuter: R, cminOff: R, cminStep: 1, cminOuter: R,
				n: rr, m: w - 1, np: np, p1: wk.p1}
			run.run()
		}
		for r := range rr {
			o, v := r*w*np+(w-1)*np, ((w-1)*R+r)*vs
			mins[(w-1)*R+r] = pathStart(vecs[v:], cost[o:o+np], sum[o:o+np], sum[o:o+np])
		}
		if w > 1 {
			run := pathRun{cur: vecs, prev: vecs, curOff: (w - 2) * R * vs, curStep: vs, curOuter: -R * vs, prevOff: (w - 1) * R * vs, prevStep: vs, prevOuter: -R * vs,
				cost: cost, sum: sum, costOff: (w - 2) * np, costStep: w * np, costOuter: -np, p2: p2, p2Off: (w - 1) * R, p2Outer: -R,
				pmin: mins, cmin: mins, pminOff: (w - 1) * R, pminStep: 1, pminOuter: -R, cminOff: (w - 2) * R, cminStep: 1, cminOuter: -R,
				n: rr, m: w - 1, np: np, p1: wk.p1}
			run.run()
		}
		for r := range rr {
			wk.selectRow(y0+r, ri, sum[r*w*np:(r+1)*w*np])
		}
	}
	if o := wk.opt; o.SpeckleSize != Off {
		wk.speckles.label(wk.disp, wk.valid, w, lo, hi, float32(o.SpeckleJump))
	}
}

func absDiff(a, b uint8) uint8 {
	if a > b {
		return a - b
	}
	return b - a
}

// band aggregates along the two directions of the lines x = i + s·y + off:
// vertical for s = 0, diagonal for s = ±1.
func (wk *worker) band(s int) {
	wk.shear = s
	lines := wk.w
	wk.lineOff = 0
	if s != 0 {
		lines = wk.w + wk.h - 1
		if s == 1 {
			wk.lineOff = -(wk.h - 1)
		}
	}
	parallel.ForN(wk.opt.MaxProcs, lines, bandLines, wk.bandFn)
}

// bandRange aggregates lines [lo, hi) of the current band downwards, then
// upwards.
func (wk *worker) bandRange(lo, hi int) {
	w, h, np, s := wk.w, wk.h, wk.np, wk.shear
	vs := np + vecPad
	lines := len(wk.lineMin) / 2
	for _, down := range [2]bool{true, false} {
		store := down && s == 0 // the first path of every pixel
		for step := range h {
			y, py, px := step, step-1, -s // previous pixel at (x+px, py)
			if !down {
				y, py, px = h-1-step, h-step, s
			}
			cur, prev := y&1, (y&1)^1
			curVec, prevVec := wk.lineVec[cur*lines*vs:(cur+1)*lines*vs], wk.lineVec[prev*lines*vs:(prev+1)*lines*vs]
			curMin, prevMin := wk.lineMin[cur*lines:(cur+1)*lines], wk.lineMin[prev*lines:(prev+1)*lines]
			x0 := max(lo+s*y+wk.lineOff, 0)
			x1 := min(hi+s*y+wk.lineOff, w)
			if x0 >= x1 {
				continue
			}
			start := func(x int) {
				i := x - s*y - wk.lineOff
				o := (y*w + x) * np
				var base []uint16 // nil: store
				if !store {
					base = wk.sum[o : o+np]
				}
				curMin[i] = pathStart(curVec[i*vs:], wk.cost[o:o+np], wk.sum[o:o+np], base)
			}
			if step == 0 {
				for x := x0; x < x1; x++ {
					start(x)
				}
				continue
			}
			// Pixels whose previous pixel lies outside the image start a
			// path: at most one per row, at an end of the image.
			a, b := x0, x1
			if a+px < 0 {
				start(a)
				a++
			}
			if b-1+px >= w {
				start(b - 1)
				b--
			}
			if a >= b {
				continue
			}
			ia := a - s*y - wk.lineOff
			var p2 []uint16
			if s == 0 {
				yy := max(y, py) // the lower of the two rows
				p2 = wk.vertP2[yy*w+a : yy*w+b]
			} else {
				g, gp := wk.greyL[y*w:(y+1)*w], wk.greyL[py*w:(py+1)*w]
				p2 = wk.lineP2[ia : ia+b-a]
				for x := a; x < b; x++ {
					p2[x-a] = wk.p2[absDiff(g[x], gp[x+px])]
				}
			}
			r := pathRun{cur: curVec, prev: prevVec, curOff: ia * vs, curStep: vs, prevOff: ia * vs, prevStep: vs,
				cost: wk.cost, sum: wk.sum, costOff: (y*w + a) * np, costStep: np, p2: p2,
				pmin: prevMin, cmin: curMin, pminOff: ia, pminStep: 1, cminOff: ia, cminStep: 1, n: b - a, np: np, p1: wk.p1, store: store}
			r.run()
		}
	}
}

// texture returns the mean absolute difference between horizontally
// adjacent grey levels in the part of pixel (x, y)'s census window inside
// the left image.
func (wk *worker) texture(x, y int) float64 {
	w, h := wk.w, wk.h
	rx, ry := wk.opt.CensusWidth/2, wk.opt.CensusHeight/2
	x0, x1 := max(x-rx, 0), min(x+rx, w-1) // differences x0|x0+1 … x1−1|x1
	y0, y1 := max(y-ry, 0), min(y+ry, h-1)
	if x1 == x0 {
		return 0
	}
	var s int32
	for r := y0; r <= y1; r++ {
		pre := wk.texPre[r*(w+1) : (r+1)*(w+1)]
		s += pre[x1] - pre[x0]
	}
	return float64(s) / float64((x1-x0)*(y1-y0+1))
}

// Validity codes in worker.valid.
const (
	invalid = 0
	matched = 1
	filled  = 2
)

// selectRow picks the disparities of row y from its summed costs: winner
// takes all, the uniqueness and left-right checks, and a parabola through
// the best cost and its neighbours for the sub-pixel position. It uses
// scratch set ri, after the horizontal paths.
func (wk *worker) selectRow(y, ri int, sum []uint16) {
	w, np, n, dlo := wk.w, wk.np, wk.n, wk.lo
	o := wk.opt
	scratch := wk.rowInt[ri*2*w : (ri+1)*2*w]
	best, rarg := scratch[:w], scratch[w:]
	vals := wk.rowP2[ri*wk.group*w : ri*wk.group*w+2*w] // the penalties' scratch, free after the rows' paths
	bestV, second := vals[:w], vals[w:]
	vs := np + vecPad
	slide := wk.slide[ri*2*vs : (ri+1)*2*vs]
	winners(sum, np, n, w, best, bestV, second)
	if o.LRTolerance != Off {
		rightWinners(sum, np, n, w, dlo, rarg, slide[:vs], slide[vs:])
	}
	disp := wk.disp[y*w : (y+1)*w]
	valid := wk.valid[y*w : (y+1)*w]
	conf := wk.conf[y*w : (y+1)*w]
	for x := range w {
		disp[x], valid[x], conf[x] = 0, invalid, 0
		bd := int(best[x])
		xr := x - dlo - bd
		if xr < 0 {
			continue // the match lies outside the right image
		}
		if o.MinTexture > 0 && wk.texture(x, y) < o.MinTexture {
			continue
		}
		bv, sec := uint32(bestV[x]), uint32(second[x])
		if sec == noPath {
			conf[x] = 1
		} else if sec > 0 {
			conf[x] = float32(sec-bv) / float32(sec)
		}
		if o.Uniqueness != Off && sec != noPath && float64(sec)*100 <= float64(bv)*(100+o.Uniqueness) {
			continue
		}
		if o.LRTolerance != Off {
			if dr := int(rarg[xr]); dr < 0 || dr-bd > o.LRTolerance || bd-dr > o.LRTolerance {
				continue
			}
		}
		f := float32(dlo + bd)
		if bd > 0 && bd < n-1 {
			v := sum[x*np : x*np+n]
			a, c := float32(v[bd-1]), float32(v[bd+1])
			if den := a + c - 2*float32(bv); den > 0 {
				f += (a - c) / (2 * den)
			}
		}
		disp[x], valid[x] = f, matched
	}
}
