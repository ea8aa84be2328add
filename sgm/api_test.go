package sgm

import (
	"context"
	"image"
	"image/color"
	"math"
	"runtime"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/parallel"
)

func TestOptionErrors(t *testing.T) {
	rig := &depth.Rig{Width: 256, Height: 128, Baseline: 0.12, Fx: 176.17688582031025, Fy: 176.17688582031025, Cx: 127.5, Cy: 63.5, MinDepth: 0.25, MaxDepth: 20}
	noMin := *rig
	noMin.MinDepth = 0
	bad := *rig
	bad.Baseline = -1
	for _, c := range []struct {
		o    Options
		want string
	}{
		{Options{MinDisparity: -1}, "MinDisparity"},
		{Options{MaxDisparity: -3}, "MaxDisparity"},
		{Options{MinDisparity: 10, MaxDisparity: 5}, "below MinDisparity"},
		{Options{MaxDisparity: 5000}, "levels"},
		{Options{CensusWidth: 4}, "census window"},
		{Options{CensusWidth: 11, CensusHeight: 7}, "census window"},
		{Options{CensusWidth: 1, CensusHeight: 1}, "census window"},
		{Options{P1: 10, P2: 10}, "penalties"},
		{Options{P2: 9000, Paths: 8}, "penalties"},
		{Options{P2: 17000}, "penalties"},
		{Options{P1: -2}, "penalties"},
		{Options{P2Falloff: -3}, "P2Falloff"},
		{Options{P2Falloff: math.Inf(1)}, "P2Falloff"},
		{Options{Paths: 6}, "Paths"},
		{Options{Uniqueness: -5}, "Uniqueness"},
		{Options{Uniqueness: math.NaN()}, "Uniqueness"},
		{Options{LRTolerance: -4}, "LRTolerance"},
		{Options{SpeckleSize: -7}, "SpeckleSize"},
		{Options{SpeckleJump: -1}, "SpeckleJump"},
		{Options{MinTexture: 300}, "MinTexture"},
		{Options{MaxWorkers: -2}, "MaxWorkers"},
		{Options{MaxProcs: -1}, "MaxProcs"},
		{Options{Rig: &noMin}, "minimum depth"},
		{Options{Rig: &bad}, "rig"},
	} {
		_, err := NewMatcher(&c.o)
		if err == nil || !strings.HasPrefix(err.Error(), "sgm: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want one starting with sgm: and naming %q", c.o, err, c.want)
		}
	}
}

// The disparity range from a rig is the disparity of its minimum depth at
// the image's width, d = Fx·Baseline/MinDepth − DeltaCx (depth.Rig's
// formula), rounded up.
func TestRangeFromRig(t *testing.T) {
	rig := &depth.Rig{Width: 256, Height: 128, Baseline: 0.12, DeltaCx: 2, Fx: 176.17688582031025, Fy: 176.17688582031025, Cx: 127.5, Cy: 63.5, MinDepth: 0.25, MaxDepth: 20}
	m, err := NewMatcher(&Options{Rig: rig, MinDisparity: 3})
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct{ width, want int }{
		{256, int(math.Ceil(176.17688582031025*0.12/0.25 - 2))},               // 82.56… → 83
		{512, int(math.Ceil((176.17688582031025*0.12/0.25 - 2) * 512 / 256))}, // 166
		{64, int(math.Ceil((176.17688582031025*0.12/0.25 - 2) * 64 / 256))},   // 21
	} {
		lo, hi, err := m.Range(c.width)
		if err != nil || lo != 3 || hi != c.want {
			t.Errorf("width %d: range [%d, %d], %v; want [3, %d]", c.width, lo, hi, err, c.want)
		}
	}
	rig.MinDepth = 10 // the caller's rig is copied
	if _, hi, _ := m.Range(256); hi != 83 {
		t.Errorf("after changing the caller's rig: hi = %d, want 83", hi)
	}
	if _, _, err := m.Range(2); err == nil || !strings.Contains(err.Error(), "MinDisparity") {
		t.Errorf("width 2 with MinDisparity 3: error %v", err)
	}
	m2, _ := NewMatcher(nil)
	if lo, hi, err := m2.Range(100); lo != 0 || hi != DefaultMaxDisparity || err != nil {
		t.Errorf("defaults: range [%d, %d], %v; want [0, %d]", lo, hi, err, DefaultMaxDisparity)
	}
}

func TestBadInputs(t *testing.T) {
	m, err := NewMatcher(&Options{MaxDisparity: 15, MinDisparity: 8})
	if err != nil {
		t.Fatal(err)
	}
	ok := image.NewGray(image.Rect(0, 0, 30, 20))
	for _, c := range []struct {
		l, r image.Image
		want string
	}{
		{nil, ok, "left image is nil"},
		{ok, nil, "right image is nil"},
		{image.NewGray(image.Rect(0, 0, 0, 5)), ok, "left image is empty"},
		{ok, image.NewGray(image.Rect(0, 0, 31, 20)), "30x20 and right image 31x20"},
		{image.NewGray(image.Rect(0, 0, 6, 20)), image.NewGray(image.Rect(0, 0, 6, 20)), "MinDisparity 8"},
		{hugeImage{}, hugeImage{}, "larger than"},
	} {
		_, err := m.Match(context.Background(), c.l, c.r)
		if err == nil || !strings.HasPrefix(err.Error(), "sgm: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("error %v, want one starting with sgm: containing %q", err, c.want)
		}
	}
	if err := m.MatchInto(context.Background(), nil, ok, ok); err == nil {
		t.Error("MatchInto(nil result): no error")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := m.Match(ctx, ok, ok); err == nil || !strings.HasPrefix(err.Error(), "sgm: ") {
		t.Errorf("cancelled context: error %v", err)
	}
	// Tiny images are matched, not refused.
	tiny := image.NewGray(image.Rect(0, 0, 9, 1))
	if _, err := m.Match(context.Background(), tiny, tiny); err != nil {
		t.Errorf("9x1 image: %v", err)
	}
}

// hugeImage claims a size no image may have, without the pixels.
type hugeImage struct{}

func (hugeImage) ColorModel() color.Model { return color.GrayModel }
func (hugeImage) Bounds() image.Rectangle { return image.Rect(0, 0, 1<<16, 1<<16) }
func (hugeImage) At(x, y int) color.Color { return color.Gray{} }

// Bounds not at the origin: the result has the left image's bounds and the
// same values as the same pixels at the origin.
func TestSubImageBounds(t *testing.T) {
	l, r := plane(90, 40, 5.5, newSmooth(11))
	big := func(g *image.Gray) *image.Gray {
		b := image.NewGray(image.Rect(-7, 3, 100, 50))
		for y := range 40 {
			copy(b.Pix[b.PixOffset(10, 5+y):], g.Pix[y*g.Stride:y*g.Stride+90])
		}
		return b.SubImage(image.Rect(10, 5, 100, 45)).(*image.Gray)
	}
	a := match(t, nil, l, r)
	b := match(t, nil, big(l), big(r))
	if b.Disparity.Rect != image.Rect(10, 5, 100, 45) {
		t.Fatalf("bounds %v", b.Disparity.Rect)
	}
	for y := range 40 {
		for x := range 90 {
			va, oka := a.Disparity.At(x, y)
			vb, okb := b.Disparity.At(x+10, y+5)
			if va != vb || oka != okb {
				t.Fatalf("(%d, %d): %v %v at the origin, %v %v in the sub-image", x, y, va, oka, vb, okb)
			}
		}
	}
}

// Colour images go through color.GrayModel's weights: an RGBA, an NRGBA
// and a generic image of the same picture give the same result as its
// *image.Gray conversion.
func TestColourInputs(t *testing.T) {
	l, r := plane(64, 32, 4.2, newSmooth(12))
	toRGBA := func(g *image.Gray) (*image.RGBA, *image.NRGBA, *image.Gray) {
		a := image.NewRGBA(g.Rect)
		n := image.NewNRGBA(g.Rect)
		grey := image.NewGray(g.Rect)
		for i, v := range g.Pix {
			c := color.RGBA{v, uint8(255 - int(v)/2), uint8(int(v) * 7 % 256), 255}
			a.Pix[4*i], a.Pix[4*i+1], a.Pix[4*i+2], a.Pix[4*i+3] = c.R, c.G, c.B, 255
			n.Pix[4*i], n.Pix[4*i+1], n.Pix[4*i+2], n.Pix[4*i+3] = c.R, c.G, c.B, 255
			grey.Pix[i] = color.GrayModel.Convert(c).(color.Gray).Y
		}
		return a, n, grey
	}
	la, ln, lg := toRGBA(l)
	ra, rn, rg := toRGBA(r)
	want := match(t, nil, lg, rg)
	for name, got := range map[string]*Result{
		"RGBA":    match(t, nil, la, ra),
		"NRGBA":   match(t, nil, ln, rn),
		"generic": match(t, nil, opaque{la}, opaque{ra}),
	} {
		if !sameResult(got, want) {
			t.Errorf("%s input differs from its grey conversion", name)
		}
	}
}

// opaque hides the concrete type of an image.
type opaque struct{ image.Image }

// The same bits for any GOMAXPROCS and for concurrent calls (DEVELOPERS.md,
// determinism).
func TestDeterminism(t *testing.T) {
	l, r := stepPair(150, 70, 70, 3, 14)
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(0))
	runtime.GOMAXPROCS(1)
	want := match(t, nil, l, r)
	for _, procs := range []int{2, 3, 8} {
		runtime.GOMAXPROCS(procs)
		if got := match(t, nil, l, r); !sameResult(got, want) {
			t.Errorf("GOMAXPROCS %d: result differs from GOMAXPROCS 1", procs)
		}
	}
	m, err := NewMatcher(&Options{MaxWorkers: 3})
	if err != nil {
		t.Fatal(err)
	}
	var wg sync.WaitGroup
	errs := make([]error, 6)
	same := make([]bool, 6)
	for i := range 6 {
		wg.Go(func() {
			res, err := m.Match(context.Background(), l, r)
			errs[i] = err
			same[i] = err == nil && sameResult(res, want)
		})
	}
	wg.Wait()
	for i := range 6 {
		if errs[i] != nil || !same[i] {
			t.Errorf("concurrent call %d: error %v, same result %v", i, errs[i], same[i])
		}
	}
}

// TestMaxProcs: with GOMAXPROCS 4, a Matcher bounded to 1 or 2
// goroutines runs at most that many of its ranges at once (counted by
// internal/parallel), and gives the same bits as an unbounded one, which
// runs more at once (with 8 paths, fill and MinTexture so that every phase
// runs).
func TestMaxProcs(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(4))
	l, r := stepPair(300, 140, 140, 3, 14)
	run := func(maxProcs int) (*Result, int) {
		m, err := NewMatcher(&Options{Paths: 8, FillHoles: true, MinTexture: 2, MaxProcs: maxProcs})
		if err != nil {
			t.Fatal(err)
		}
		var res *Result
		peak := parallel.PeakRanges(func() {
			if res, err = m.Match(context.Background(), l, r); err != nil {
				t.Fatal(err)
			}
		})
		return res, peak
	}
	want, peak := run(0)
	for try := 0; try < 20 && peak < 2; try++ { // a loaded machine may run the ranges one by one
		time.Sleep(20 * time.Millisecond)
		want, peak = run(0)
	}
	if peak < 2 {
		t.Errorf("unbounded: at most %d ranges at once; want more than 1", peak)
	}
	for _, maxProcs := range []int{1, 2} {
		got, peak := run(maxProcs)
		if peak > maxProcs {
			t.Errorf("MaxProcs %d: %d ranges at once", maxProcs, peak)
		}
		if !sameResult(got, want) {
			t.Errorf("MaxProcs %d: result differs from the unbounded one", maxProcs)
		}
	}
}

func TestNoAllocations(t *testing.T) {
	if raceEnabled {
		t.Skip("the race detector allocates")
	}
	l, r := plane(120, 60, 7.5, newSmooth(13))
	m, err := NewMatcher(&Options{FillHoles: true})
	if err != nil {
		t.Fatal(err)
	}
	var res Result
	if err := m.MatchInto(context.Background(), &res, l, r); err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	if n := testing.AllocsPerRun(5, func() { _ = m.MatchInto(ctx, &res, l, r) }); n != 0 {
		t.Errorf("MatchInto allocates %v times per call in steady state", n)
	}
}

func TestFillHoles(t *testing.T) {
	nan := float32(math.NaN())
	for _, c := range []struct {
		in, want []float32 // NaN: invalid
	}{
		{[]float32{nan, 3, nan, nan, 7, nan}, []float32{3, 3, 3, 3, 7, 7}},
		{[]float32{9, nan, 2, nan, nan, 5, 1}, []float32{9, 2, 2, 2, 2, 5, 1}},
		{[]float32{nan, nan, nan}, []float32{nan, nan, nan}},
		{[]float32{4}, []float32{4}},
		{[]float32{nan, 6}, []float32{6, 6}},
	} {
		d, _ := depth.NewDisparity(image.Rect(2, 1, 2+len(c.in), 2))
		for x, v := range c.in {
			if !math.IsNaN(float64(v)) {
				d.Set(2+x, 1, v)
			}
		}
		holes := len(c.in) - d.Valid()
		n, err := FillHoles(d)
		if err != nil {
			t.Fatal(err)
		}
		filled := 0
		for x, v := range c.want {
			got, ok := d.At(2+x, 1)
			if math.IsNaN(float64(v)) {
				if ok {
					t.Errorf("%v: pixel %d filled with %v, want a hole", c.in, x, got)
				}
				continue
			}
			if !ok || got != v {
				t.Errorf("%v: pixel %d is %v (valid %v), want %v", c.in, x, got, ok, v)
			}
			if math.IsNaN(float64(c.in[x])) {
				filled++
			}
		}
		if n != filled || n > holes {
			t.Errorf("%v: FillHoles returned %d, filled %d", c.in, n, filled)
		}
	}
	if _, err := FillHoles(nil); err == nil || !strings.HasPrefix(err.Error(), "sgm: ") {
		t.Errorf("FillHoles(nil): %v", err)
	}
	if _, err := ZeroHoles(&depth.Disparity{}); err == nil || !strings.HasPrefix(err.Error(), "sgm: ") {
		t.Errorf("ZeroHoles(empty map): %v", err)
	}
}

// A call's memory, everything a fresh Matcher allocates for its first pair
// (the worker's buffers and the result's maps) at the sizes of issue 15's
// targets on 2 goroutines, stays within its budget of 4 bytes per cell
// (width × height × disparity levels searched), with 4 and 8 paths.
func TestMemoryPerCell(t *testing.T) {
	if raceEnabled {
		t.Skip("the race detector allocates")
	}
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(2))
	for _, c := range []struct {
		w, h, levels, paths int
	}{{370, 250, 48, 4}, {370, 250, 48, 8}, {640, 480, 80, 4}, {640, 480, 80, 8}} {
		l, r := noiseGray(c.w, c.h, 1), noiseGray(c.w, c.h, 2)
		m, err := NewMatcher(&Options{MaxDisparity: c.levels - 1, Paths: c.paths})
		if err != nil {
			t.Fatal(err)
		}
		runtime.GC()
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		if _, err := m.Match(context.Background(), l, r); err != nil {
			t.Fatal(err)
		}
		runtime.ReadMemStats(&after)
		perCell := float64(after.TotalAlloc-before.TotalAlloc) / float64(c.w*c.h*c.levels)
		t.Logf("%dx%d, %d levels, %d paths: %.2f bytes per cell", c.w, c.h, c.levels, c.paths, perCell)
		if perCell > 4 {
			t.Errorf("%dx%d, %d levels, %d paths: %.2f bytes per cell, more than 4", c.w, c.h, c.levels, c.paths, perCell)
		}
	}
}
