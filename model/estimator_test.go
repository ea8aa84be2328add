package model

import (
	"context"
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"
	"os/exec"
	"path/filepath"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/model/demo"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

func demoInputs(t testing.TB) (image.Image, *depth.Rig) {
	img, err := demo.Left()
	if err != nil {
		t.Fatal(err)
	}
	rig, err := demo.Rig()
	if err != nil {
		t.Fatal(err)
	}
	return img, rig
}

// TestEstimateMatchesNet checks the estimator against the Net it wraps on
// an image of the network's size: disparity is disp0's channel 0 times the
// width, depth is the rig's f·B/d, and confidence follows the formula of
// LRConfidence evaluated here pixel by pixel.
func TestEstimateMatchesNet(t *testing.T) {
	img, rig := demoInputs(t)
	// The confidence and texture rules have their own tests (validity_test.go).
	est, err := NewEstimator(nil, &EstimatorOptions{Rig: rig, Validity: ValidityOptions{MinConfidence: ValidityOff, MinTexture: ValidityOff}})
	if err != nil {
		t.Fatal(err)
	}
	got, err := est.Estimate(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	in, err := planar.FromImage(img)
	if err != nil {
		t.Fatal(err)
	}
	net, err := NewNet(est.Weights(), 1)
	if err != nil {
		t.Fatal(err)
	}
	outs, err := net.Forward(in)
	if err != nil {
		t.Fatal(err)
	}
	d := outs[0]
	h, w := d.H, d.W
	if b := got.Disparity.Rect; b != image.Rect(0, 0, w, h) || got.Depth.Rect != b || got.Confidence.Rect != b {
		t.Fatalf("bounds %v %v %v", b, got.Depth.Rect, got.Confidence.Rect)
	}
	lowConf, outOfRange := 0, 0
	for y := range h {
		for x := range w {
			dl, dr := d.At(0, 0, y, x), d.At(0, 1, y, x)
			v, ok := got.Disparity.At(x, y)
			// The rig's range of interest (validity.go): outside it both
			// maps are invalid.
			want := rig.Fx * rig.Baseline / (float64(dl) * float64(w))
			if want < rig.MinDepth*(1-1e-5) || want > rig.MaxDepth*(1+1e-5) {
				if _, zok := got.Depth.At(x, y); ok || zok {
					t.Fatalf("(%d, %d): depth %v outside the rig's range [%v, %v] is valid", x, y, want, rig.MinDepth, rig.MaxDepth)
				}
				outOfRange++
			} else {
				// 8-bit/255 (planar) against 16-bit/65535 (estimator): equal up
				// to float32 rounding of the input, a few ulps at the output.
				if !ok || math.Abs(float64(v)-float64(dl)*float64(w)) > 1e-4 {
					t.Fatalf("disparity at (%d, %d): %v %v, want %v", x, y, v, ok, dl*float32(w))
				}
				z, ok := got.Depth.At(x, y)
				if !ok || math.Abs(float64(z)-want) > 1e-5*want {
					t.Fatalf("depth at (%d, %d): %v, want %v", x, y, z, want)
				}
			}
			// d̃_R by hand: linear interpolation of d_R at u = x − d_L·W.
			u := float64(x) - float64(dl)*float64(w)
			wantC := 0.0
			if u >= 0 && u <= float64(w-1) {
				i0 := int(math.Floor(u))
				i1 := min(i0+1, w-1)
				a := u - float64(i0)
				r := (1-a)*float64(d.At(0, 1, y, i0)) + a*float64(d.At(0, 1, y, i1))
				wantC = math.Exp(-math.Abs(float64(dl)-r) * float64(w))
			}
			c, ok := got.Confidence.At(x, y)
			if !ok || math.Abs(float64(c)-wantC) > 2e-3 {
				t.Fatalf("confidence at (%d, %d): %v, want %v (d_L %v, d_R %v)", x, y, c, wantC, dl, dr)
			}
			if c < 0.5 {
				lowConf++
			}
		}
	}
	t.Logf("%d of %d pixels have confidence below 0.5, %d outside the rig's range", lowConf, w*h, outOfRange)
}

// TestEstimateOtherSizes checks that any input size comes back at that
// size, that the disparity in pixels scales with the width (the network's
// output is a fraction of the width) and that the rig is rescaled. The
// network runs at the weights' size (TrainingSize) so that it sees the same
// image for both inputs.
func TestEstimateOtherSizes(t *testing.T) {
	img, rig := demoInputs(t)
	est, err := NewEstimator(nil, &EstimatorOptions{Rig: rig, TrainingSize: true, Validity: validityOff})
	if err != nil {
		t.Fatal(err)
	}
	base, err := est.Estimate(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	// Every pixel repeated 2×2: the network sees the same image after the
	// resize, so the fractions agree and pixels double.
	b := img.Bounds()
	big := image.NewNRGBA(image.Rect(10, 20, 10+2*b.Dx(), 20+2*b.Dy()))
	for y := range big.Rect.Dy() {
		for x := range big.Rect.Dx() {
			big.Set(10+x, 20+y, img.At(b.Min.X+x/2, b.Min.Y+y/2))
		}
	}
	got, err := est.Estimate(context.Background(), big)
	if err != nil {
		t.Fatal(err)
	}
	if got.Disparity.Rect != image.Rect(0, 0, 512, 256) || got.Rig.Width != 512 || got.Rig.Height != 256 {
		t.Fatalf("bounds %v, rig %dx%d", got.Disparity.Rect, got.Rig.Width, got.Rig.Height)
	}
	var sum, n float64
	for y := 0; y < 256; y += 2 {
		for x := 0; x < 512; x += 2 {
			v, _ := got.Disparity.At(x, y)
			v0, _ := base.Disparity.At(x/2, y/2)
			sum += math.Abs(float64(v)/2 - float64(v0))
			n++
		}
	}
	// The 2x upscale through Catmull-Rom and back is not exact; the mean
	// difference stays well below the disparities (several pixels).
	if mean := sum / n; mean > 0.5 {
		t.Errorf("mean |d(2x)/2 − d| = %v px", mean)
	}
	// Depth is resolution-free: same scene, same metres, through the rig
	// rescaled to 512×256 (focal length doubled).
	if math.Abs(got.Rig.Fx-2*rig.Fx) > 1e-9*rig.Fx {
		t.Errorf("scaled focal %v, want %v", got.Rig.Fx, 2*rig.Fx)
	}
	var rel float64
	for y := 0; y < 256; y += 2 {
		for x := 0; x < 512; x += 2 {
			z, _ := got.Depth.At(x, y)
			z0, _ := base.Depth.At(x/2, y/2)
			rel += math.Abs(float64(z-z0)) / float64(z0)
		}
	}
	if rel /= n; rel > 0.05 {
		t.Errorf("mean relative depth difference between 2x and 1x: %v", rel)
	}
	// A small odd size of the rig's aspect ratio (within 1 %) works too.
	small := image.NewGray(image.Rect(0, 0, 103, 51))
	got, err = est.Estimate(context.Background(), small)
	if err != nil || got.Disparity.Rect.Dx() != 103 || got.Depth.Rect.Dy() != 51 {
		t.Fatalf("103x51: %v", err)
	}
}

// hugeImage claims enormous bounds without storing pixels.
type hugeImage struct{ image.Rectangle }

func (h hugeImage) ColorModel() color.Model { return color.GrayModel }
func (h hugeImage) Bounds() image.Rectangle { return h.Rectangle }
func (h hugeImage) At(x, y int) color.Color { return color.Gray{} }

func TestEstimatorErrors(t *testing.T) {
	est, err := NewEstimator(tinyWeights(t), nil)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	for _, c := range []struct {
		img  image.Image
		want string
	}{
		{nil, "image is nil"},
		{image.NewRGBA(image.Rect(5, 5, 5, 9)), "image is empty"},
		{hugeImage{image.Rect(0, 0, 100000, 10)}, "too large"},
		{hugeImage{image.Rect(0, 0, 20000, 20000)}, "too large"},
	} {
		if _, err := est.Estimate(ctx, c.img); err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Estimate: %v, want an error containing %q", err, c.want)
		}
	}
	cctx, cancel := context.WithCancel(ctx)
	cancel()
	if _, err := est.Estimate(cctx, image.NewGray(image.Rect(0, 0, 8, 8))); !errors.Is(err, context.Canceled) || !strings.HasPrefix(err.Error(), "model: ") {
		t.Errorf("cancelled: %v", err)
	}
	w := tinyWeights(t)
	delete(w.Params, "dec2.weight")
	if _, err := NewEstimator(w, nil); err == nil || !strings.Contains(err.Error(), "dec2.weight") {
		t.Errorf("missing tensor: %v", err)
	}
	w = tinyWeights(t)
	w.Params["enc1a.bias"] = w.Params["enc1a.bias"][:1]
	if _, err := NewEstimator(w, nil); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Errorf("wrong shape: %v", err)
	}
	for _, o := range []EstimatorOptions{{ConfidenceScale: -1}, {ConfidenceScale: math.NaN()}, {MaxWorkers: -2}, {Rig: &depth.Rig{}}} {
		if _, err := NewEstimator(tinyWeights(t), &o); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("options %+v: %v", o, err)
		}
	}
}

// TestEstimatorConcurrent runs 8 goroutines on one Estimator (with fewer
// workers than goroutines, so that calls wait for each other) and checks
// every result equals the single-goroutine one bit for bit. Run it with
// -race.
func TestEstimatorConcurrent(t *testing.T) {
	w := tinyWeights(t)
	rig := &depth.Rig{Width: 128, Height: 64, Baseline: 0.1, Fx: 100, Fy: 100, Cx: 64, Cy: 32, MaxDepth: 50}
	for _, flip := range []bool{false, true} {
		// The sizes below have many aspect ratios: stretch the rig to each.
		est, err := NewEstimator(w, &EstimatorOptions{Rig: rig, StretchRig: true, Flip: flip, MaxWorkers: 3})
		if err != nil {
			t.Fatal(err)
		}
		const n = 6
		imgs := make([]image.Image, n)
		want := make([]*Estimate, n)
		for i := range imgs {
			m := image.NewRGBA(image.Rect(0, 0, 100+13*i, 60+7*i))
			for k := range m.Pix {
				m.Pix[k] = uint8((k*(i+3) + k/97) % 251)
			}
			imgs[i] = m
			if want[i], err = est.Estimate(context.Background(), m); err != nil {
				t.Fatal(err)
			}
		}
		var wg sync.WaitGroup
		errs := make(chan error, 8)
		for g := range 8 {
			wg.Add(1)
			go func() {
				defer wg.Done()
				for r := range 2 * n {
					i := (g + r) % n
					got, err := est.Estimate(context.Background(), imgs[i])
					if err != nil {
						errs <- err
						return
					}
					if err := sameEstimate(got, want[i]); err != nil {
						errs <- fmt.Errorf("goroutine %d image %d: %v", g, i, err)
						return
					}
				}
			}()
		}
		wg.Wait()
		close(errs)
		for err := range errs {
			t.Error(err)
		}
	}
}

func sameEstimate(a, b *Estimate) error {
	for _, p := range [][2]*depth.Map{{&a.Disparity.Map, &b.Disparity.Map}, {&a.Confidence.Map, &b.Confidence.Map}, {&a.Depth.Map, &b.Depth.Map}} {
		if p[0].Rect != p[1].Rect {
			return fmt.Errorf("bounds %v vs %v", p[0].Rect, p[1].Rect)
		}
		for i := range p[0].Pix {
			if p[0].Pix[i] != p[1].Pix[i] || p[0].Mask[i] != p[1].Mask[i] {
				return fmt.Errorf("pixel %d: %v vs %v", i, p[0].Pix[i], p[1].Pix[i])
			}
		}
	}
	return nil
}

// TestFlipEquivariant checks the flip post-processing with real weights:
// with the ramps mirror images of each other, estimating the mirrored image
// must give the mirrored estimate (the blend formula is symmetric under
// mirroring only if the mirrored prediction is mirrored back and channel 0
// is used). Without flip the network itself is not mirror-symmetric, which
// the test also checks so that the first check means something.
func TestFlipEquivariant(t *testing.T) {
	img, _ := demoInputs(t)
	b := img.Bounds()
	mirror := image.NewRGBA(image.Rect(0, 0, b.Dx(), b.Dy()))
	for y := range b.Dy() {
		for x := range b.Dx() {
			mirror.Set(b.Dx()-1-x, y, img.At(b.Min.X+x, b.Min.Y+y))
		}
	}
	for _, flip := range []bool{true, false} {
		est, err := NewEstimator(nil, &EstimatorOptions{Flip: flip, Validity: validityOff})
		if err != nil {
			t.Fatal(err)
		}
		a, err := est.Estimate(context.Background(), img)
		if err != nil {
			t.Fatal(err)
		}
		m, err := est.Estimate(context.Background(), mirror)
		if err != nil {
			t.Fatal(err)
		}
		worst := 0.0
		for y := range b.Dy() {
			for x := range b.Dx() {
				v, _ := a.Disparity.At(x, y)
				u, _ := m.Disparity.At(b.Dx()-1-x, y)
				worst = max(worst, math.Abs(float64(u-v)))
			}
		}
		t.Logf("flip %v: largest |mirror(estimate(mirror(img))) − estimate(img)| = %.3g px", flip, worst)
		if flip && worst > 1e-3 {
			t.Errorf("flip blend is not mirror-equivariant: %g px", worst)
		}
		if !flip && worst < 0.01 {
			t.Errorf("without flip the estimate is already mirror-symmetric (%g px): the flip check proves nothing", worst)
		}
	}
}

func TestLRConfidenceHand(t *testing.T) {
	const h, w = 1, 10
	left, right := make([]float32, w), make([]float32, w)
	for x := range w {
		left[x], right[x] = 0.2, 0.2 // 2 px
	}
	right[5] = 0.3 // pixel 7 lands on right column 5: 1 px disagreement
	conf, s1, s2 := make([]float32, w), make([]float32, w), make([]float32, w)
	LRConfidence(conf, s1, s2, left, right, h, w, 1)
	for x := range w {
		want := 1.0
		switch {
		case x < 2:
			want = 0 // x − 2 < 0: outside the right view
		case x == 7:
			want = math.Exp(-1)
		}
		if math.Abs(float64(conf[x])-want) > 1e-6 {
			t.Errorf("x=%d: %v, want %v", x, conf[x], want)
		}
	}
	LRConfidence(conf, s1, s2, left, right, h, w, 2)
	if math.Abs(float64(conf[7])-math.Exp(-0.5)) > 1e-6 {
		t.Errorf("tau 2: %v", conf[7])
	}
}

// TestFlipRolesOnSyntheticPair checks, with the exact ground truth of a
// synthetic greenhouse pair (package synth, testdata/synth), the geometry
// FlipBlend relies on. Mirroring both views turns the left image into the
// RIGHT view of the mirrored pair (the mirrored right image is now on the
// left), and the disparity of that right view is the mirrored d_L: the
// mirrored right image rebuilds the mirrored left image through mirror(d_L)
// with RebuildRight. So the disparity of the mirrored image's own pixels,
// which the network puts in channel 0 whatever the view, mirrored back
// estimates d_L; mirror(d_R) does not fit.
func TestFlipRolesOnSyntheticPair(t *testing.T) {
	dir := filepath.Join("..", "testdata", "synth", "greenhouse")
	load := func(p string) *planar.Image { return testutil.Planar(t, filepath.Join(dir, p)) }
	pfm := func(p string, w int) *planar.Image {
		pix, pw, ph, _, err := depth.LoadPFM(filepath.Join(dir, p))
		if err != nil {
			t.Fatal(err)
		}
		im := planar.New(1, 1, ph, pw)
		for i, v := range pix {
			im.Pix[i] = v / float32(w)
		}
		return im
	}
	left, right := load("left/000000.png"), load("right/000000.png")
	occ := load("truth/occ_left/000000.png")
	dl, dr := pfm("truth/disp_left/000000.pfm", left.W), pfm("truth/disp_right/000000.pfm", left.W)
	mir := func(m *planar.Image) *planar.Image {
		o := m.Clone()
		mirrorPlanes(o.Pix, m.Pix, m.C*m.H, m.W)
		return o
	}
	// err returns the mean absolute colour error of rebuilding target
	// from src with disp in direction dir over pixels visible in both views
	// (occlusion mask mirrored as given) with the sample inside the source.
	errOf := func(target, src, disp, occMask *planar.Image, dir warp.Direction) float64 {
		out, mask, err := warp.Warp(src, disp, dir, warp.Zero)
		if err != nil {
			t.Fatal(err)
		}
		var sum float64
		var n int
		plane := target.H * target.W
		for i := range plane {
			if mask.Pix[i] == 0 || occMask.Pix[i] > 0.5 {
				continue
			}
			for c := range 3 {
				sum += math.Abs(float64(out.Pix[c*plane+i] - target.Pix[c*plane+i]))
			}
			n++
		}
		return sum / float64(3*n)
	}
	base := errOf(left, right, dl, occ, warp.RebuildLeft)
	good := errOf(mir(left), mir(right), mir(dl), mir(occ), warp.RebuildRight)
	bad := errOf(mir(left), mir(right), mir(dr), mir(occ), warp.RebuildRight)
	t.Logf("mean |error|: original pair %.4f, mirrored with mirror(d_L) %.4f, with mirror(d_R) %.4f", base, good, bad)
	if math.Abs(good-base) > 1e-6 {
		t.Errorf("mirrored rebuild %v differs from the original %v: mirroring should be exact", good, base)
	}
	if !(bad > 1.5*good) {
		t.Errorf("mirror(d_R) rebuilds as well as mirror(d_L) (%v vs %v): the check cannot tell the views apart", bad, good)
	}
}

// TestEmbedHasNoGorgonia asserts that the estimator's import graph, as an
// embedding program sees it, holds no gorgonia.
func TestEmbedHasNoGorgonia(t *testing.T) {
	goBin, err := exec.LookPath("go")
	if err != nil {
		t.Skip("go command not found")
	}
	for _, pkg := range []string{"github.com/parallaxdepth/parallax/examples/embed", "github.com/parallaxdepth/parallax/model"} {
		out, err := exec.Command(goBin, "list", "-deps", pkg).CombinedOutput()
		if err != nil {
			t.Fatalf("go list -deps %s: %v\n%s", pkg, err, out)
		}
		if !strings.Contains(string(out), "github.com/parallaxdepth/parallax/model\n") {
			t.Fatalf("go list -deps %s does not list the model package:\n%s", pkg, out)
		}
		for _, line := range strings.Split(string(out), "\n") {
			if strings.Contains(line, "gorgonia") {
				t.Errorf("%s depends on %s", pkg, line)
			}
		}
	}
}

func benchmarkEstimate(b *testing.B, flip bool) {
	img, rig := demoInputs(b)
	est, err := NewEstimator(nil, &EstimatorOptions{Rig: rig, Flip: flip, MaxWorkers: 1})
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	if _, err := est.Estimate(ctx, img); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := est.Estimate(ctx, img); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkEstimate256x128 is one image at the default network size with
// the default architecture, from image.Image to disparity, confidence and
// depth maps.
func BenchmarkEstimate256x128(b *testing.B)     { benchmarkEstimate(b, false) }
func BenchmarkEstimate256x128Flip(b *testing.B) { benchmarkEstimate(b, true) }

// TestEstimateWaitsAndCancels holds the only worker and checks that a call
// gives up when its context ends while it waits, and proceeds once the
// worker is back.
func TestEstimateWaitsAndCancels(t *testing.T) {
	est, err := NewEstimator(tinyWeights(t), &EstimatorOptions{MaxWorkers: 1})
	if err != nil {
		t.Fatal(err)
	}
	wk, err := est.acquire(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 20*time.Millisecond)
	defer cancel()
	img := image.NewGray(image.Rect(0, 0, 40, 30))
	if _, err := est.Estimate(ctx, img); !errors.Is(err, context.DeadlineExceeded) {
		t.Fatalf("waiting for the worker past the deadline: %v", err)
	}
	est.release(wk)
	if _, err := est.Estimate(context.Background(), img); err != nil {
		t.Fatal(err)
	}
}

// Estimate.Rig is the caller's copy: changing it leaves the Estimator's rig,
// and so the next estimate, alone (with the input at the rig's size, where
// no rescaling makes a new rig anyway).
func TestEstimateRigIsACopy(t *testing.T) {
	w := tinyWeights(t)
	rig := &depth.Rig{Width: 128, Height: 64, Baseline: 0.1, Fx: 100, Fy: 100, Cx: 64, Cy: 32, MaxDepth: 50}
	est, err := NewEstimator(w, &EstimatorOptions{Rig: rig})
	if err != nil {
		t.Fatal(err)
	}
	img := image.NewRGBA(image.Rect(0, 0, 128, 64))
	for k := range img.Pix {
		img.Pix[k] = uint8(k * 7 % 251)
	}
	first, err := est.Estimate(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	if *first.Rig != *rig {
		t.Fatalf("rig at the rig's own size: %+v, want %+v", *first.Rig, *rig)
	}
	first.Rig.Baseline *= 2
	second, err := est.Estimate(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	if second.Rig.Baseline != rig.Baseline {
		t.Errorf("changing one Estimate's rig changed the Estimator's: baseline %v, want %v", second.Rig.Baseline, rig.Baseline)
	}
	if err := sameEstimate(first, second); err != nil {
		t.Errorf("second estimate: %v", err)
	}
}
