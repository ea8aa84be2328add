package model

import (
	"bytes"
	"context"
	"image"
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/parallaxdepth/parallax/internal/parallel"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/safetensors"
	"github.com/parallaxdepth/parallax/sgm"
)

var tinyStereoConfig = Config{Arch: StereoArchName, Width: 64, Height: 64, Encoder: []int{4, 6, 8}, Decoder: []int{3, 4, 6, 8}}

func randomPlanar(rng *rand.Rand, n, c, h, w int) *planar.Image {
	im := planar.New(n, c, h, w)
	for i := range im.Pix {
		im.Pix[i] = rng.Float32()
	}
	return im
}

// shiftedPair returns a random left view and a right view that is the left
// one shifted by d pixels (right(x) = left(x + d)), edges repeated, so that
// the true left disparity is d everywhere but the right border.
func shiftedPair(rng *rand.Rand, h, w, d int) (left, right *planar.Image) {
	left = planar.New(1, 3, h, w)
	// Smooth-ish texture: random values blurred along the row, so the
	// matcher's census has something to work with.
	for c := range 3 {
		for y := range h {
			var acc float32
			for x := range w {
				acc = 0.6*acc + 0.4*rng.Float32()
				left.Pix[(c*h+y)*w+x] = acc
			}
		}
	}
	right = planar.New(1, 3, h, w)
	for c := range 3 {
		for y := range h {
			for x := range w {
				right.Pix[(c*h+y)*w+x] = left.Pix[(c*h+y)*w+min(x+d, w-1)]
			}
		}
	}
	return left, right
}

// The default stereo network fits the budget of 2 M parameters, and
// its weights file names the architecture.
func TestStereoDefaultConfig(t *testing.T) {
	a, err := Build(Config{Arch: StereoArchName})
	if err != nil {
		t.Fatal(err)
	}
	if n := a.NumParams(); n > 2_000_000 || n < 1000 {
		t.Errorf("default stereo network has %d parameters, want at most 2,000,000", n)
	}
	if !a.IsStereo() || a.Kind() != "stereo" {
		t.Errorf("IsStereo %v, Kind %q", a.IsStereo(), a.Kind())
	}
	w, err := NewWeights(tinyStereoConfig, 1)
	if err != nil {
		t.Fatal(err)
	}
	var buf bytes.Buffer
	if err := w.Encode(&buf, safetensors.F16); err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(buf.Bytes(), []byte(`"arch":"`+StereoArchName+`"`)) {
		t.Error("weights file does not name the stereo architecture in its metadata")
	}
	back, err := Decode(buf.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if back.Config.Arch != StereoArchName {
		t.Errorf("decoded arch %q", back.Config.Arch)
	}
}

// The stereo network is fully convolutional: the same weights run at any
// size that is a multiple of 32 (the weights' parameter shapes do not depend
// on the size).
func TestStereoAnySize(t *testing.T) {
	w, err := NewWeights(tinyStereoConfig, 2)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(1, 1))
	for _, sz := range [][2]int{{64, 64}, {96, 64}, {160, 96}, {64, 128}} {
		c := w.Config
		c.Width, c.Height = sz[0], sz[1]
		ws := &Weights{Config: c, Params: w.Params}
		net, err := NewNet(ws, 1)
		if err != nil {
			t.Fatalf("%dx%d: %v", sz[0], sz[1], err)
		}
		l, r := shiftedPair(rng, sz[1], sz[0], 3)
		out, err := net.ForwardPair(l, r)
		if err != nil {
			t.Fatalf("%dx%d: %v", sz[0], sz[1], err)
		}
		for s, o := range out {
			if o.N != 1 || o.C != 2 || o.H != sz[1]>>s || o.W != sz[0]>>s {
				t.Errorf("%dx%d scale %d: output %s", sz[0], sz[1], s, o.Shape())
			}
			if err := o.CheckFinite("output"); err != nil {
				t.Errorf("%dx%d scale %d: %v", sz[0], sz[1], s, err)
			}
		}
	}
}

// Fresh stereo weights (residual heads near zero, as train.PrepareHeads
// leaves them; here scaled by hand) already output about the matcher's
// estimate: on a pair shifted by 4 pixels, d_L·W is near 4 and d_R·W too.
func TestStereoStartsFromTheMatcher(t *testing.T) {
	w, err := NewWeights(tinyStereoConfig, 3)
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range w.Params {
		if strings.HasPrefix(name, "res") {
			clear(v)
		}
	}
	net, err := NewNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(4, 4))
	l, r := shiftedPair(rng, 64, 64, 4)
	out, err := net.ForwardPair(l, r)
	if err != nil {
		t.Fatal(err)
	}
	d := out[0]
	p := d.H * d.W
	for ch, name := range []string{"d_L", "d_R"} {
		var sum float64
		var n int
		for y := 8; y < 56; y++ {
			for x := 12; x < 52; x++ {
				sum += math.Abs(float64(d.Pix[ch*p+y*d.W+x])*64 - 4)
				n++
			}
		}
		if mean := sum / float64(n); mean > 0.75 {
			t.Errorf("%s: mean |d·W − 4| = %.3f px in the interior, want ≤ 0.75", name, mean)
		} else {
			t.Logf("%s: mean |d·W − 4| = %.3f px", name, mean)
		}
	}
}

// A one-image call on stereo weights and the reverse are errors naming the
// kind.
func TestStereoKindErrors(t *testing.T) {
	ws, err := NewWeights(tinyStereoConfig, 1)
	if err != nil {
		t.Fatal(err)
	}
	stereo, err := NewNet(ws, 1)
	if err != nil {
		t.Fatal(err)
	}
	img := planar.New(1, 3, 64, 64)
	if _, err := stereo.Forward(img); err == nil || !strings.Contains(err.Error(), "stereo") {
		t.Errorf("Forward on stereo weights: %v", err)
	}
	if _, err := stereo.ForwardPair(img, planar.New(1, 3, 64, 32)); err == nil || !strings.Contains(err.Error(), "right image") {
		t.Errorf("ForwardPair with a right view of another size: %v", err)
	}
	w1, err := NewWeights(Config{Width: 64, Height: 64}, 1)
	if err != nil {
		t.Fatal(err)
	}
	mono, err := NewNet(w1, 1)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := mono.ForwardPair(img, img); err == nil || !strings.Contains(err.Error(), "one-image") {
		t.Errorf("ForwardPair on one-image weights: %v", err)
	}
}

// PairView and PairViewBackward, PackPair and UnpackPair are each other's
// transposes: <A x, y> = <x, Aᵀ y> on random vectors.
func TestPairAdjoints(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	const n, c, h, w = 2, 3, 4, 5
	dot := func(a, b []float32) float64 {
		var s float64
		for i := range a {
			s += float64(a[i]) * float64(b[i])
		}
		return s
	}
	rnd := func(k int) []float32 {
		v := make([]float32, k)
		for i := range v {
			v[i] = rng.Float32() - 0.5
		}
		return v
	}
	k := 2 * n * c * h * w
	for _, v := range []View{ViewLeft, ViewRight} {
		x, y := rnd(k), rnd(k)
		ax, aty := make([]float32, k), make([]float32, k)
		PairView(ax, x, v, n, c, h, w)
		PairViewBackward(aty, y, v, n, c, h, w)
		if a, b := dot(ax, y), dot(x, aty); math.Abs(a-b) > 1e-4 {
			t.Errorf("PairView %v: <Ax,y> = %g, <x,Aᵀy> = %g", v, a, b)
		}
	}
	kp := 2 * n * h * w
	x, y := rnd(kp), rnd(kp)
	px, uy := make([]float32, kp), make([]float32, kp)
	PackPair(px, x, n, h, w)
	UnpackPair(uy, y, n, h, w)
	if a, b := dot(px, y), dot(x, uy); math.Abs(a-b) > 1e-4 {
		t.Errorf("PackPair: <Ax,y> = %g, <x,Aᵀy> = %g", a, b)
	}
	// PairView of [a; b] with ViewLeft is [a; mirror(b)]: one hand case.
	src := []float32{1, 2, 3, 4} // n = 1, c = 1, h = 1, w = 2: a = (1 2), b = (3 4)
	dst := make([]float32, 4)
	PairView(dst, src, ViewLeft, 1, 1, 1, 2)
	if want := []float32{1, 2, 4, 3}; !equalF32(dst, want) {
		t.Errorf("PairView left = %v, want %v", dst, want)
	}
	PairView(dst, src, ViewRight, 1, 1, 1, 2)
	if want := []float32{3, 4, 2, 1}; !equalF32(dst, want) {
		t.Errorf("PairView right = %v, want %v", dst, want)
	}
}

func equalF32(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if a[i] != b[i] {
			return false
		}
	}
	return true
}

// The embedded stereo weights decode, are of the stereo kind, fit the
// issue's size budget (F16, at most 8 MB) and say how far they are trained.
func TestDefaultStereo(t *testing.T) {
	w, err := DefaultStereo()
	if err != nil {
		t.Fatal(err)
	}
	if w.Config.Arch != StereoArchName {
		t.Errorf("embedded stereo weights have architecture %q", w.Config.Arch)
	}
	if len(defaultStereoWeights) > 8<<20 {
		t.Errorf("embedded stereo weights take %d bytes, want at most 8 MB", len(defaultStereoWeights))
	}
	if len(defaultStereoWeights)+len(defaultWeights) > 12<<20 {
		t.Errorf("embedded weights take %d bytes together, want at most 12 MB", len(defaultStereoWeights)+len(defaultWeights))
	}
	if w.Provenance[ProvenanceStatus] == "" {
		t.Errorf("the embedded stereo weights' provenance has no %q: %v", ProvenanceStatus, w.Provenance)
	}
}

// Version 1 stereo weights match at half resolution and version 2 at full
// resolution; both give about the true shift when pooled to the same level,
// and other versions and levels are refused.
func TestMatchLevels(t *testing.T) {
	for v, want := range map[int]int{1: 1, 2: 0, 0: 0} {
		c := tinyStereoConfig
		c.Version = v
		if got := c.WithDefaults().MatchLevel(); got != want {
			t.Errorf("version %d: match level %d, want %d", v, got, want)
		}
	}
	if err := (Config{Arch: StereoArchName, Version: 3}).Validate(); err == nil {
		t.Error("stereo version 3 accepted")
	}
	if _, err := NewMatching(1, 64, 64, 0.3, 2); err == nil {
		t.Error("match level 2 accepted")
	}
	rng := rand.New(rand.NewPCG(5, 5))
	const shift = 6 // pixels at full resolution
	l, r := shiftedPair(rng, 64, 96, shift)
	pairs := append(append([]float32(nil), l.Pix...), r.Pix...)
	for level := range 2 {
		m, err := NewMatching(1, 96, 64, 0.3, level)
		if err != nil {
			t.Fatal(err)
		}
		if err := m.Compute(pairs); err != nil {
			t.Fatal(err)
		}
		h, w := 64>>1, 96>>1
		dst := make([]float32, 2*2*h*w)
		m.Pool(dst, 1, 2) // channel 0: pixels at ½ resolution
		var sum float64
		var n int
		for y := 4; y < h-4; y++ {
			for x := 8; x < w-8; x++ {
				sum += math.Abs(float64(dst[y*w+x]) - shift/2)
				n++
			}
		}
		if mean := sum / float64(n); mean > 0.25 {
			t.Errorf("level %d: mean |d − %v| = %.3f px at ½ resolution, want ≤ 0.25", level, shift/2.0, mean)
		}
	}
}

// UpgradeStereo keeps every version 1 parameter, gives the new input
// channels of ref0.a zero weights, and refuses weights of other versions.
func TestUpgradeStereo(t *testing.T) {
	c := tinyStereoConfig
	c.Version = 1
	w, err := NewWeights(c, 7)
	if err != nil {
		t.Fatal(err)
	}
	old := w.Params["ref0.a.weight"]
	others := map[string][]float32{}
	for k, v := range w.Params {
		others[k] = v
	}
	if err := w.UpgradeStereo(); err != nil {
		t.Fatal(err)
	}
	if w.Config.Version != 2 {
		t.Fatalf("version %d after upgrade", w.Config.Version)
	}
	nv := w.Params["ref0.a.weight"]
	out := tinyStereoConfig.WithDefaults().Decoder[0]
	k := 9
	oldIn, in := len(old)/(out*k), len(nv)/(out*k)
	if in != oldIn+3 {
		t.Fatalf("ref0.a has %d input channels after upgrade, want %d + 3", in, oldIn)
	}
	for o := range out {
		for i := range in {
			for j := range k {
				got := nv[(o*in+i)*k+j]
				want := float32(0)
				if i < oldIn {
					want = old[(o*oldIn+i)*k+j]
				}
				if got != want {
					t.Fatalf("ref0.a.weight[%d,%d,%d] = %v, want %v", o, i, j, got, want)
				}
			}
		}
	}
	for name, v := range others {
		if name != "ref0.a.weight" && &w.Params[name][0] != &v[0] {
			t.Errorf("%s changed by the upgrade", name)
		}
	}
	if err := w.UpgradeStereo(); err == nil {
		t.Error("version 2 weights upgraded again")
	}
}

// TestMatchingMaxProcs: with GOMAXPROCS 4, a Matching bounded to 1 or 2
// goroutines runs at most that many of sgm's ranges at once (counted by
// internal/parallel), matches side by side included, and gives the same
// planes as an unbounded one, which runs more than one at once. A negative bound
// is refused.
func TestMatchingMaxProcs(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(4))
	const n, h, w = 2, 48, 96
	pairs := pairBatch(rand.New(rand.NewPCG(6, 2)), n, h, w, 3)
	m, err := NewMatching(n, w, h, 0.3, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(m.slots) < 2 {
		t.Fatalf("%d slots; the test needs matches side by side", len(m.slots))
	}
	compute := func(maxProcs int) (disp, valid []float32, peak int) {
		if err := m.SetMaxProcs(maxProcs); err != nil {
			t.Fatal(err)
		}
		m.Invalidate()
		peak = parallel.PeakRanges(func() { err = m.Compute(pairs) })
		if err != nil {
			t.Fatal(err)
		}
		return slices.Clone(m.disp), slices.Clone(m.valid), peak
	}
	disp, valid, peak := compute(0)
	for try := 0; try < 20 && peak < 2; try++ { // a loaded machine may run the ranges one by one
		time.Sleep(20 * time.Millisecond)
		disp, valid, peak = compute(0)
	}
	t.Logf("unbounded: %d ranges at once", peak)
	if peak < 2 {
		t.Errorf("unbounded: at most %d ranges at once; want more than 1", peak)
	}
	for _, maxProcs := range []int{1, 2, 0} {
		d, v, peak := compute(maxProcs)
		t.Logf("SetMaxProcs(%d): %d ranges at once", maxProcs, peak)
		if maxProcs > 0 && peak > maxProcs {
			t.Errorf("SetMaxProcs(%d): %d ranges at once", maxProcs, peak)
		}
		if !slices.Equal(d, disp) || !slices.Equal(v, valid) {
			t.Errorf("SetMaxProcs(%d): the planes differ from the unbounded ones", maxProcs)
		}
	}
	if err := m.SetMaxProcs(-1); err == nil {
		t.Error("SetMaxProcs(-1) accepted")
	}
}

// TestMatchingSlots checks that the matches of a batch give the same
// planes whether they run one after another or side by side (Compute puts
// each match's results in its own plane), and that the one-pixel grey
// conversion is greyMeans' arithmetic, values at the rounding boundaries
// included.
func TestMatchingSlots(t *testing.T) {
	rng := rand.New(rand.NewPCG(6, 1))
	const n, h, w = 3, 32, 64
	pairs := pairBatch(rng, n, h, w, 2)
	var got [2]*Matching
	for i, k := range []int{1, 4} {
		m, err := NewMatching(n, w, h, 0.3, 0)
		if err != nil {
			t.Fatal(err)
		}
		m.slots = m.slots[:1]
		for len(m.slots) < k {
			sl, err := newMatchSlot(w, h, sgm.Options{MaxDisparity: m.maxDisp})
			if err != nil {
				t.Fatal(err)
			}
			m.slots = append(m.slots, sl)
		}
		if err := m.Compute(pairs); err != nil {
			t.Fatal(err)
		}
		// Every slot ran a match, whatever the timing, so it holds the
		// memory the stage is counted to (TestScratchBytes).
		for s := range m.slots {
			if m.slots[s].res.Disparity == nil {
				t.Errorf("%d slots: slot %d ran no match", k, s)
			}
		}
		got[i] = m
	}
	for i := range got[0].disp {
		if got[0].disp[i] != got[1].disp[i] || got[0].valid[i] != got[1].valid[i] {
			t.Fatalf("value %d (plane %d): %v/%v one by one, %v/%v side by side", i, i/(h*w), got[0].disp[i], got[0].valid[i], got[1].disp[i], got[1].valid[i])
		}
	}
	// Plane j against the matcher run directly: pair j, then the mirrored,
	// swapped pairs.
	direct, err := sgm.NewMatcher(&sgm.Options{MaxDisparity: got[0].maxDisp})
	if err != nil {
		t.Fatal(err)
	}
	img := 3 * h * w
	for j := range 2 * n {
		i := j % n
		l, r := pairs[i*img:(i+1)*img], pairs[(n+i)*img:(n+i+1)*img]
		if j >= n {
			l, r = r, l
		}
		gl, gr := image.NewGray(image.Rect(0, 0, w, h)), image.NewGray(image.Rect(0, 0, w, h))
		greyMeans(gl, l, h, w, 1, j >= n)
		greyMeans(gr, r, h, w, 1, j >= n)
		res, err := direct.Match(context.Background(), gl, gr)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := sgm.FillHoles(res.Disparity); err != nil {
			t.Fatal(err)
		}
		for k, v := range got[0].disp[j*h*w : (j+1)*h*w] {
			d := res.Disparity
			if want := d.Pix[k/w*d.Stride+k%w]; d.Mask[k/w*d.Stride+k%w] != 0 && v != want {
				t.Fatalf("plane %d, pixel %d: %v, the matcher on its pair gives %v", j, k, v, want)
			}
		}
	}
	var nonzero int
	for _, v := range got[0].disp {
		if v != 0 {
			nonzero++
		}
	}
	if nonzero < len(got[0].disp)/2 {
		t.Fatalf("only %d of %d disparities are not 0", nonzero, len(got[0].disp))
	}

	// Grey values: random ones, and ones whose luma·255 lands on k + ½.
	rgb := make([]float32, 3*h*w)
	for i := range rgb {
		rgb[i] = rng.Float32()
	}
	for i := 0; i < h*w; i += 3 {
		k := float32(rng.IntN(255)) + 0.5
		rgb[i], rgb[h*w+i], rgb[2*h*w+i] = k/255, k/255, k/255
	}
	for _, mirror := range []bool{false, true} {
		a, b := image.NewGray(image.Rect(0, 0, w, h)), image.NewGray(image.Rect(0, 0, w, h))
		greyBlocks(a, rgb, h, w, 1, mirror)
		greyMeans(b, rgb, h, w, 1, mirror)
		if !slices.Equal(a.Pix, b.Pix) {
			t.Fatalf("mirror %v: the one-pixel grey conversion differs from greyMeans'", mirror)
		}
	}
}

// pairBatch returns the input of a stereo batch of n shifted pairs of
// h × w (shifts d, d+1, …): the n left views, then the n right views.
func pairBatch(rng *rand.Rand, n, h, w, d int) []float32 {
	pairs := make([]float32, 0, 2*n*3*h*w)
	var rights []float32
	for i := range n {
		l, r := shiftedPair(rng, h, w, d+i)
		pairs = append(pairs, l.Pix...)
		rights = append(rights, r.Pix...)
	}
	return append(pairs, rights...)
}
