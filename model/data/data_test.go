package data

import (
	"bytes"
	"context"
	"errors"
	"image"
	"image/color"
	"image/jpeg"
	"image/png"
	"io"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// texture is a smooth random row pattern, the same on every row, so that
// a horizontal shift by an integer is exact.
func texture(r *rand.Rand, n int) []float64 {
	v := make([]float64, n)
	for i := range v {
		v[i] = 0.2 + 0.6*r.Float64()
	}
	return v
}

type fixture struct {
	w, h, d int // size and the disparity in pixels
	truth   bool
	rig     bool
}

// writePair writes a pair in which the right image is the left one shifted
// by d pixels: a point at left column x is at right column x−d, so
// R(u) = L(u+d) (package warp's sign).
func writePair(t *testing.T, dir, name string, f fixture, seed uint64) {
	t.Helper()
	r := rand.New(rand.NewPCG(seed, 1))
	tex := texture(r, f.w+f.d)
	l := image.NewNRGBA(image.Rect(0, 0, f.w, f.h))
	rt := image.NewNRGBA(image.Rect(0, 0, f.w, f.h))
	for y := 0; y < f.h; y++ {
		for x := 0; x < f.w; x++ {
			a := uint8(tex[x]*255 + 0.5)
			b := uint8(tex[x+f.d]*255 + 0.5)
			l.SetNRGBA(x, y, color.NRGBA{a, 255 - a, a / 2, 255})
			rt.SetNRGBA(x, y, color.NRGBA{b, 255 - b, b / 2, 255})
		}
	}
	savePNG(t, filepath.Join(dir, "left", name+".png"), l)
	savePNG(t, filepath.Join(dir, "right", name+".png"), rt)
	if f.truth {
		disp := make([]float32, f.w*f.h)
		dep := make([]float32, f.w*f.h)
		for i := range disp {
			disp[i] = float32(f.d)
			dep[i] = 2.5
		}
		disp[0] = float32(math.Inf(1)) // no truth at (0, 0)
		for _, k := range []string{string(dataset.DispLeft), string(dataset.DispRight)} {
			mkdir(t, filepath.Join(dir, "truth", k))
			if err := depth.SavePFM(filepath.Join(dir, "truth", k, name+".pfm"), disp, f.w, f.h, 1); err != nil {
				t.Fatal(err)
			}
		}
		mkdir(t, filepath.Join(dir, "truth", string(dataset.DepthLeft)))
		if err := depth.SavePFM(filepath.Join(dir, "truth", string(dataset.DepthLeft), name+".pfm"), dep, f.w, f.h, 1); err != nil {
			t.Fatal(err)
		}
		occ := image.NewGray(image.Rect(0, 0, f.w, f.h))
		for y := 0; y < f.h; y++ {
			for x := 0; x < f.d; x++ {
				occ.SetGray(x, y, color.Gray{255})
			}
		}
		savePNG(t, filepath.Join(dir, "truth", string(dataset.OccLeft), name+".png"), occ)
	}
}

func mkdir(t *testing.T, d string) {
	t.Helper()
	if err := os.MkdirAll(d, 0o755); err != nil {
		t.Fatal(err)
	}
}

func savePNG(t *testing.T, path string, img image.Image) {
	t.Helper()
	mkdir(t, filepath.Dir(path))
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

func writeDataset(t *testing.T, f fixture, names ...string) string {
	t.Helper()
	dir := t.TempDir()
	for i, n := range names {
		writePair(t, dir, n, f, uint64(i))
	}
	if f.rig {
		rig := depth.Rig{Width: f.w, Height: f.h, Baseline: 0.1, Fx: 100, Fy: 100,
			Cx: float64(f.w-1) / 2, Cy: float64(f.h-1) / 2, MinDepth: 0.5, MaxDepth: 20}
		var b bytes.Buffer
		if err := rig.Write(&b); err != nil {
			t.Fatal(err)
		}
		if err := os.WriteFile(filepath.Join(dir, "rig.json"), b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

// wantErr is testutil.WantError for this package's errors; it stops the
// test when err is nil.
func wantErr(t *testing.T, err error, parts ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error, want one containing %q", parts)
	}
	testutil.WantError(t, "error", err, "data: ", parts...)
}

func TestLoadCorruptNamesFile(t *testing.T) {
	dir := writeDataset(t, fixture{w: 32, h: 16, d: 2, truth: true}, "a", "b")
	// A PNG cut after its header passes Open and fails on decoding.
	p := filepath.Join(dir, "right", "b.png")
	full, _ := os.ReadFile(p)
	os.WriteFile(p, full[:len(full)/2], 0o644)
	q := filepath.Join(dir, "truth", string(dataset.DispLeft), "a.pfm")
	pfm, _ := os.ReadFile(q)
	os.WriteFile(q, pfm[:len(pfm)-10], 0o644)
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	_, err = LoadSample(ds, 1, 32, 16)
	wantErr(t, err, "right/b.png")
	_, err = LoadSample(ds, 0, 32, 16)
	wantErr(t, err, "a.pfm")

	// The loader stops at the first error and reports it.
	l, err := NewLoader(ds, &Options{Width: 32, Height: 16, BatchSize: 1})
	if err != nil {
		t.Fatal(err)
	}
	it := l.Epoch(context.Background(), 0)
	defer it.Close()
	_, err = it.Next()
	wantErr(t, err, "a.pfm")
	if _, err2 := it.Next(); err2 != err {
		t.Errorf("second Next = %v, want the same error", err2)
	}
}

func TestResizeGroundTruth(t *testing.T) {
	const w, h, d = 64, 32, 6
	dir := writeDataset(t, fixture{w: w, h: h, d: d, truth: true}, "a")
	// Left half of the disparity invalid (NaN, Inf, 0, negative in turn).
	disp := make([]float32, w*h)
	bad := []float32{float32(math.NaN()), float32(math.Inf(1)), 0, -3}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			if x < w/2 {
				disp[y*w+x] = bad[(x+y)%4]
			} else {
				disp[y*w+x] = d
			}
		}
	}
	if err := depth.SavePFM(filepath.Join(dir, "truth", string(dataset.DispLeft), "a.pfm"), disp, w, h, 1); err != nil {
		t.Fatal(err)
	}
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, size := range [][2]int{{32, 16}, {64, 32}, {96, 64}} {
		s, err := LoadSample(ds, 0, size[0], size[1])
		if err != nil {
			t.Fatal(err)
		}
		nw := size[0]
		// d pixels at width 64 are d·nw/64 pixels at width nw, that is
		// the fraction d/64 of the width (project convention).
		wantFrac := float32(d) * float32(nw) / w / float32(nw)
		for y := 0; y < size[1]; y++ {
			for x := 0; x < nw; x++ {
				got := s.DispLeft.At(0, 0, y, x)
				want := wantFrac
				if x < nw/2 {
					want = 0
				}
				if got != want {
					t.Fatalf("%v: disp_left(%d, %d) = %v, want %v", size, x, y, got, want)
				}
				if px := got * float32(nw); x >= nw/2 && math.Abs(float64(px)-d*float64(nw)/w) > 1e-5 {
					t.Fatalf("%v: %v pixels, want %v", size, px, d*float64(nw)/w)
				}
			}
		}
		if s.DepthLeft.At(0, 0, 3, 3) != 2.5 {
			t.Errorf("depth %v, want 2.5 m", s.DepthLeft.At(0, 0, 3, 3))
		}
		// The occluded band (the first d columns, value 255) scales with
		// the width: nearest sampling keeps it binary.
		for x := 0; x < nw; x++ {
			want := float32(0)
			if (float64(x)+0.5)*w/float64(nw) < d {
				want = 1
			}
			if got := s.OccLeft.At(0, 0, 2, x); got != want {
				t.Fatalf("%v: occ(%d) = %v, want %v", size, x, got, want)
			}
		}
	}
}

func TestResizeImageAntialiased(t *testing.T) {
	// Halving a one-pixel black/white column stripe: nearest sampling would
	// keep 0 or 1, an antialiasing filter gives about ½ everywhere.
	img := image.NewGray(image.Rect(0, 0, 64, 32))
	for y := 0; y < 32; y++ {
		for x := 0; x < 64; x += 2 {
			img.SetGray(x, y, color.Gray{255})
		}
	}
	out, err := resizeImage(img, 32, 16)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range out.Pix {
		x := i % 32
		if x > 1 && x < 30 && math.Abs(float64(v)-0.5) > 0.02 {
			t.Fatalf("pixel %d = %v, want ≈ 0.5", i, v)
		}
	}
	// A constant image stays constant (Catmull-Rom weights sum to 1).
	c := image.NewRGBA(image.Rect(0, 0, 50, 30))
	for i := range c.Pix {
		c.Pix[i] = [4]uint8{51, 102, 204, 255}[i%4]
	}
	if out, err = resizeImage(c, 32, 32); err != nil {
		t.Fatal(err)
	}
	for i, v := range out.Pix {
		want := [3]float32{0.2, 0.4, 0.8}[i/(32*32)]
		if math.Abs(float64(v-want)) > 1e-4 {
			t.Fatalf("constant image: pixel %d = %v, want %v", i, v, want)
		}
	}
}

// TestFlipSwapConsistent checks the flip-and-swap on a pair whose right
// view is the left one shifted by d pixels: afterwards, warping the new
// right image by the new left disparity (package warp, RebuildLeft) must
// rebuild the new left image, and the disparity must still be positive.
func TestFlipSwapConsistent(t *testing.T) {
	const w, h, d = 64, 8, 5
	dir := writeDataset(t, fixture{w: w, h: h, d: d, truth: true}, "a")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	s, err := LoadSample(ds, 0, w, h)
	if err != nil {
		t.Fatal(err)
	}
	check := func(what string, s *Sample) {
		disp := s.DispLeft.Clone()
		for i, v := range disp.Pix {
			if v == 0 {
				disp.Pix[i] = float32(d) / w // the one pixel without truth
			}
			if v < 0 {
				t.Fatalf("%s: negative disparity %v", what, v)
			}
		}
		rebuilt, mask, err := warp.Warp(s.Right, disp, warp.RebuildLeft, warp.Zero)
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for c := 0; c < 3; c++ {
			for y := 0; y < h; y++ {
				for x := 0; x < w; x++ {
					if mask.At(0, 0, y, x) == 0 {
						continue
					}
					n++
					if got, want := rebuilt.At(0, c, y, x), s.Left.At(0, c, y, x); math.Abs(float64(got-want)) > 1e-5 {
						t.Fatalf("%s: rebuilt left (%d, %d, %d) = %v, left %v", what, c, y, x, got, want)
					}
				}
			}
		}
		if n < 3*h*(w-d-1) {
			t.Fatalf("%s: only %d valid samples", what, n)
		}
	}
	check("original", s)
	FlipSwap(s)
	check("flipped", s)
	if !s.Flipped || s.DepthLeft != nil {
		t.Errorf("flipped sample: Flipped %v, depth %v", s.Flipped, s.DepthLeft != nil)
	}
	// The sample without swapping (mirror only) must fail the same test:
	// this is what makes the check meaningful.
	s2, _ := LoadSample(ds, 0, w, h)
	mirror(s2.Left)
	mirror(s2.Right)
	mirror(s2.DispLeft)
	rebuilt, mask, _ := warp.Warp(s2.Right, s2.DispLeft, warp.RebuildLeft, warp.Zero)
	worst := 0.0
	for i := range rebuilt.Pix {
		if mask.Pix[i%(w*h)] != 0 {
			worst = max(worst, math.Abs(float64(rebuilt.Pix[i]-s2.Left.Pix[i])))
		}
	}
	if worst < 0.05 {
		t.Errorf("mirroring without swapping rebuilt the left view (error %v): the test cannot tell", worst)
	}
}

func TestFlipSwapMapsTruth(t *testing.T) {
	// With distinct random maps: new left disparity(x) = old right
	// disparity(W−1−x) and vice versa.
	r := rand.New(rand.NewPCG(3, 3))
	mk := func(c int) *planar.Image {
		im := planar.New(1, c, 2, 5)
		for i := range im.Pix {
			im.Pix[i] = r.Float32()
		}
		return im
	}
	s := &Sample{Left: mk(3), Right: mk(3), DispLeft: mk(1), DispRight: mk(1), DepthLeft: mk(1), OccLeft: mk(1), OccRight: mk(1)}
	orig := &Sample{Left: s.Left.Clone(), Right: s.Right.Clone(), DispLeft: s.DispLeft.Clone(), DispRight: s.DispRight.Clone(),
		OccLeft: s.OccLeft.Clone(), OccRight: s.OccRight.Clone()}
	FlipSwap(s)
	for y := 0; y < 2; y++ {
		for x := 0; x < 5; x++ {
			if s.DispLeft.At(0, 0, y, x) != orig.DispRight.At(0, 0, y, 4-x) || s.DispRight.At(0, 0, y, x) != orig.DispLeft.At(0, 0, y, 4-x) {
				t.Fatalf("disparity maps not swapped and mirrored at (%d, %d)", x, y)
			}
			if s.OccLeft.At(0, 0, y, x) != orig.OccRight.At(0, 0, y, 4-x) || s.OccRight.At(0, 0, y, x) != orig.OccLeft.At(0, 0, y, 4-x) {
				t.Fatalf("occlusion maps not swapped and mirrored at (%d, %d)", x, y)
			}
			for c := 0; c < 3; c++ {
				if s.Left.At(0, c, y, x) != orig.Right.At(0, c, y, 4-x) || s.Right.At(0, c, y, x) != orig.Left.At(0, c, y, 4-x) {
					t.Fatalf("images not swapped and mirrored at (%d, %d, %d)", c, x, y)
				}
			}
		}
	}
}

func TestPhotometricKeepsViewsConsistent(t *testing.T) {
	const w, h, d = 48, 4, 3
	dir := writeDataset(t, fixture{w: w, h: h, d: d}, "a")
	ds, _ := dataset.Open(dir)
	s, _ := LoadSample(ds, 0, w, h)
	before := s.Left.Clone()
	a := Augment{Photometric: 1, Gamma: [2]float64{0.7, 0.7}, Brightness: [2]float64{1.3, 1.3}, Colour: [2]float64{0.9, 1.1}}
	a.apply(s, rand.New(rand.NewPCG(1, 2)))
	changed := false
	for c := 0; c < 3; c++ {
		for y := 0; y < h; y++ {
			for x := d; x < w; x++ {
				l, r := s.Left.At(0, c, y, x), s.Right.At(0, c, y, x-d)
				if l != r {
					t.Fatalf("left (%d,%d,%d) = %v but right (%d) = %v after augmentation", c, y, x, l, x-d, r)
				}
				if l < 0 || l > 1 {
					t.Fatalf("value %v outside [0, 1]", l)
				}
				// v^0.7 · 1.3 · colour, clamped: 0.7 and 1.3 fixed.
				v := float64(before.At(0, c, y, x))
				if lo, hi := math.Min(1, math.Pow(v, 0.7)*1.3*0.9), math.Min(1, math.Pow(v, 0.7)*1.3*1.1); float64(l) < lo-1e-5 || float64(l) > hi+1e-5 {
					t.Fatalf("value %v outside [%v, %v] for input %v", l, lo, hi, v)
				}
				changed = changed || l != before.At(0, c, y, x)
			}
		}
	}
	if !changed {
		t.Fatal("augmentation changed nothing")
	}
	if err := (&Augment{Flip: 2}).Validate(); err == nil {
		t.Error("Flip 2 accepted")
	}
	if err := (&Augment{Gamma: [2]float64{1.2, 0.8}}).Validate(); err == nil {
		t.Error("reversed gamma range accepted")
	}
}

func TestSplit(t *testing.T) {
	names := []string{"p0", "p1", "p2", "p3", "p4", "p5", "p6", "p7", "p8", "p9"}
	ds := &dataset.Set{}
	for _, n := range names {
		ds.Pairs = append(ds.Pairs, dataset.PairFiles{Name: n})
	}
	tr, va, err := Split(ds, 0.3, 42)
	if err != nil {
		t.Fatal(err)
	}
	if len(va.Pairs) != 3 || len(tr.Pairs) != 7 {
		t.Fatalf("split sizes %d/%d, want 7/3", len(tr.Pairs), len(va.Pairs))
	}
	seen := map[string]int{}
	for _, p := range append(append([]dataset.PairFiles(nil), tr.Pairs...), va.Pairs...) {
		seen[p.Name]++
	}
	if len(seen) != 10 {
		t.Fatalf("split lost or duplicated pairs: %v", seen)
	}
	tr2, va2, _ := Split(ds, 0.3, 42)
	_, va3, _ := Split(ds, 0.3, 43)
	key := func(d *dataset.Set) string {
		var s []string
		for _, p := range d.Pairs {
			s = append(s, p.Name)
		}
		return strings.Join(s, ",")
	}
	if key(va) != key(va2) || key(tr) != key(tr2) {
		t.Error("split is not deterministic")
	}
	if key(va) == key(va3) {
		t.Errorf("seeds 42 and 43 give the same validation set %s", key(va))
	}
	if _, _, err := Split(&dataset.Set{Pairs: ds.Pairs[:1]}, 0.5, 1); err == nil {
		t.Error("split of one pair accepted")
	}
	if tr, va, err := Split(ds, 0, 1); err != nil || va != nil || len(tr.Pairs) != len(ds.Pairs) {
		t.Errorf("fraction 0: %v, %d training pairs of %d, validation %v", err, len(tr.Pairs), len(ds.Pairs), va)
	}
	if _, _, err := Split(ds, -0.1, 1); err == nil {
		t.Error("a negative fraction was accepted")
	}
	if _, _, err := Split(ds, 1, 1); err == nil {
		t.Error("fraction 1 accepted")
	}
}

func epochBatches(t *testing.T, l *Loader, epoch int) []*Batch {
	t.Helper()
	it := l.Epoch(context.Background(), epoch)
	defer it.Close()
	var out []*Batch
	for {
		b, err := it.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, b)
	}
}

func TestLoaderDeterministic(t *testing.T) {
	dir := writeDataset(t, fixture{w: 64, h: 32, d: 3, truth: true}, "a", "b", "c", "d", "e", "f", "g")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	opt := Options{Width: 32, Height: 32, BatchSize: 3, Shuffle: true, Seed: 9, Augment: &DefaultAugment, Prefetch: 1}
	l1, err := NewLoader(ds, &opt)
	if err != nil {
		t.Fatal(err)
	}
	opt.Prefetch = 4
	l4, _ := NewLoader(ds, &opt)
	a, b := epochBatches(t, l1, 0), epochBatches(t, l4, 0)
	if len(a) != 3 || a[2].Left.N != 1 || a[0].Left.N != 3 || l1.NumBatches() != 3 {
		t.Fatalf("%d batches, last of %d", len(a), a[len(a)-1].Left.N)
	}
	names := map[string]bool{}
	flips := 0
	for i := range a {
		if !equalBatch(a[i], b[i]) {
			t.Fatalf("batch %d differs between 1 and 4 prefetching goroutines", i)
		}
		for j, n := range a[i].Names {
			names[n] = true
			if a[i].Flipped[j] {
				flips++
				if a[i].DepthLeft.Item(j).Pix[5] != 0 {
					t.Error("flipped sample kept its depth")
				}
			} else if a[i].DepthLeft.Item(j).Pix[5] != 2.5 {
				t.Error("sample lost its depth")
			}
		}
		if a[i].Left.W != 32 || a[i].DispLeft == nil || a[i].OccLeft == nil {
			t.Fatalf("batch %d shape %s", i, a[i].Left.Shape())
		}
	}
	if len(names) != 7 {
		t.Fatalf("epoch covered %d pairs, want 7", len(names))
	}
	if flips == 0 || flips == 7 {
		t.Errorf("%d of 7 samples flipped with probability 0.5", flips)
	}
	c := epochBatches(t, l1, 1)
	if equalBatch(a[0], c[0]) && equalBatch(a[1], c[1]) {
		t.Error("epochs 0 and 1 serve the same batches")
	}
	// DropPartial drops the last batch; no shuffle keeps name order.
	l, _ := NewLoader(ds, &Options{Width: 32, Height: 32, BatchSize: 3, DropPartial: true})
	d := epochBatches(t, l, 0)
	if len(d) != 2 || strings.Join(d[1].Names, "") != "def" {
		t.Fatalf("DropPartial: %d batches, second %v", len(d), d[1].Names)
	}
}

// Options.Cache serves the batches an uncached loader serves, with and
// without augmentation (which must not reach the cached samples), and
// reads no file after the first epoch: the set's files are removed before
// epochs 1 and 2.
func TestLoaderCache(t *testing.T) {
	for _, aug := range []*Augment{nil, &DefaultAugment} {
		dir := writeDataset(t, fixture{w: 64, h: 32, d: 3, truth: true}, "a", "b", "c", "d", "e")
		ds, err := dataset.Open(dir)
		if err != nil {
			t.Fatal(err)
		}
		opt := Options{Width: 48, Height: 32, BatchSize: 2, Shuffle: true, Seed: 4, Augment: aug}
		plain, err := NewLoader(ds, &opt)
		if err != nil {
			t.Fatal(err)
		}
		opt.Cache = true
		cached, err := NewLoader(ds, &opt)
		if err != nil {
			t.Fatal(err)
		}
		var want [3][]*Batch
		for e := range want {
			want[e] = epochBatches(t, plain, e)
		}
		got0 := epochBatches(t, cached, 0)
		if err := os.RemoveAll(dir); err != nil {
			t.Fatal(err)
		}
		for e, got := range [][]*Batch{got0, epochBatches(t, cached, 1), epochBatches(t, cached, 2)} {
			if len(got) != len(want[e]) {
				t.Fatalf("augment %v, epoch %d: %d batches, want %d", aug != nil, e, len(got), len(want[e]))
			}
			for i := range got {
				if !equalBatch(got[i], want[e][i]) {
					t.Fatalf("augment %v, epoch %d, batch %d: the cached loader serves other values", aug != nil, e, i)
				}
			}
		}
		if _, err := NewLoader(ds, &Options{Width: 48, Height: 32}); err != nil {
			t.Fatal(err)
		} else if _, err := LoadSample(ds, 0, 48, 32); err == nil {
			t.Fatal("the set's files are still readable: the check above proves nothing")
		}
	}
}

func equalBatch(a, b *Batch) bool {
	if strings.Join(a.Names, ",") != strings.Join(b.Names, ",") {
		return false
	}
	for _, p := range [][2]*planar.Image{{a.Left, b.Left}, {a.Right, b.Right}, {a.DispLeft, b.DispLeft}} {
		if !p[0].SameShape(p[1]) {
			return false
		}
		for i := range p[0].Pix {
			if p[0].Pix[i] != p[1].Pix[i] {
				return false
			}
		}
	}
	return true
}

func TestLoaderCloseEarly(t *testing.T) {
	dir := writeDataset(t, fixture{w: 32, h: 32, d: 1}, "a", "b", "c", "d")
	ds, _ := dataset.Open(dir)
	l, _ := NewLoader(ds, &Options{Width: 32, Height: 32, BatchSize: 1, Prefetch: 2})
	it := l.Epoch(context.Background(), 0)
	if _, err := it.Next(); err != nil {
		t.Fatal(err)
	}
	it.Close() // must not hang with batches in flight
	if _, err := it.Next(); err == nil {
		t.Error("Next after Close succeeded")
	}
	if _, err := NewLoader(ds, &Options{BatchSize: -1}); err == nil {
		t.Error("negative batch size accepted")
	}
	if _, err := NewLoader(&dataset.Set{}, nil); err == nil {
		t.Error("empty dataset accepted")
	}
}

func TestJPEGWithoutTruth(t *testing.T) {
	dir := t.TempDir()
	img := image.NewRGBA(image.Rect(0, 0, 40, 20))
	for i := range img.Pix {
		img.Pix[i] = 128
	}
	for _, side := range []string{"left", "right"} {
		mkdir(t, filepath.Join(dir, side))
		var b bytes.Buffer
		jpeg.Encode(&b, img, nil)
		os.WriteFile(filepath.Join(dir, side, "x.JPG"), b.Bytes(), 0o644)
	}
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	if ds.Rig != nil || len(ds.Truth) != 0 {
		t.Fatalf("rig %v, truth %v", ds.Rig, ds.Truth)
	}
	s, err := LoadSample(ds, 0, 64, 32)
	if err != nil {
		t.Fatal(err)
	}
	if s.DispLeft != nil || math.Abs(float64(s.Left.At(0, 1, 10, 10))-128.0/255) > 0.02 {
		t.Fatalf("disp %v, green %v", s.DispLeft, s.Left.At(0, 1, 10, 10))
	}
}

// A zero Width or Height takes the pairs' stored size; pairs of different
// sizes then need an explicit size.
func TestLoaderDefaultSize(t *testing.T) {
	dir := writeDataset(t, fixture{w: 40, h: 24, d: 2, truth: true}, "a", "b")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range []*Options{nil, {Width: 20}, {Height: 12}} {
		l, err := NewLoader(ds, o)
		if err != nil {
			t.Fatal(err)
		}
		b := epochBatches(t, l, 0)[0]
		wantW, wantH := 40, 24
		if o != nil && o.Width != 0 {
			wantW = o.Width
		}
		if o != nil && o.Height != 0 {
			wantH = o.Height
		}
		if b.Left.W != wantW || b.Left.H != wantH || b.DispLeft.W != wantW || len(b.Names) != 2 {
			t.Errorf("options %+v: batch %dx%d (disparity %d wide), %d pairs; want %dx%d", o, b.Left.W, b.Left.H, b.DispLeft.W, len(b.Names), wantW, wantH)
		}
	}
	other := writeDataset(t, fixture{w: 32, h: 24, d: 2}, "c")
	mixed := *ds
	o2, err := dataset.Open(other)
	if err != nil {
		t.Fatal(err)
	}
	mixed.Pairs = append(append([]dataset.PairFiles(nil), ds.Pairs...), o2.Pairs...)
	mixed.Truth = nil
	_, err = NewLoader(&mixed, nil)
	wantErr(t, err, "differ in size", "40×24", "32×24")
	if _, err := NewLoader(&mixed, &Options{Height: 24}); err == nil {
		t.Error("a zero width over pairs of different widths accepted")
	}
	if _, err := NewLoader(&mixed, &Options{Width: 32, Height: 24}); err != nil {
		t.Errorf("explicit size: %v", err)
	}
}

// TestLoaderRefusesSmallPairs: with MinSide, a pair narrower or lower than
// it is refused by name with its size and the minimum (issue 12 item 9: a
// 1×1 pair was blown up to the training size and trained on silently).
func TestLoaderRefusesSmallPairs(t *testing.T) {
	ds, err := dataset.Open(writeDataset(t, fixture{w: 40, h: 24, d: 2}, "a"))
	if err != nil {
		t.Fatal(err)
	}
	tiny, err := dataset.Open(writeDataset(t, fixture{w: 1, h: 1, d: 0}, "one"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := NewLoader(ds, &Options{Width: 64, Height: 64, MinSide: 24}); err != nil {
		t.Errorf("40×24 with a minimum of 24: %v", err)
	}
	_, err = NewLoader(ds, &Options{Width: 64, Height: 64, MinSide: 25})
	wantErr(t, err, `"a" is 40×24`, "at least 25×25")
	_, err = NewLoader(tiny, &Options{Width: 64, Height: 64, MinSide: 64})
	wantErr(t, err, `"one" is 1×1`, "at least 64×64")
	if _, err := NewLoader(tiny, &Options{Width: 64, Height: 64}); err != nil {
		t.Errorf("no minimum: %v", err)
	}
	_, err = NewLoader(ds, &Options{MinSide: -1})
	wantErr(t, err, "minimum side -1")
}
