package model

import (
	"context"
	"fmt"
	"image"
	"math"
	"math/rand/v2"
	"strings"
	"sync"
	"testing"

	xdraw "golang.org/x/image/draw"
)

// The network size rule (issue 16 item 3): aspect ratio kept, sides rounded
// to multiples of 32 and at least 64, the longer side capped. Expected
// sizes worked out by hand from the rule in NetworkSize's documentation.
func TestNetworkSize(t *testing.T) {
	for _, c := range []struct {
		name          string
		w, h, max     int
		wantW, wantH  int
		wantErr       string
		aspectTolerat float64 // |aspect change|, relative
	}{
		{name: "4:3 VGA", w: 640, h: 480, wantW: 384, wantH: 288, aspectTolerat: 0.001},
		{name: "4:3 VGA, cap 640", w: 640, h: 480, max: 640, wantW: 640, wantH: 480, aspectTolerat: 0.001},
		{name: "16:9 HD (216 rows round to 224)", w: 1280, h: 720, wantW: 384, wantH: 224, aspectTolerat: 0.04},
		{name: "16:9 full HD, cap 1024 (1024x576 exceeds MaxNetPixels)", w: 1920, h: 1080, max: 1024, wantW: 960, wantH: 544, aspectTolerat: 0.01},
		{name: "portrait 3:4", w: 480, h: 640, wantW: 288, wantH: 384, aspectTolerat: 0.001},
		{name: "Motorcycle 370x250 (below the cap: rounded only)", w: 370, h: 250, wantW: 384, wantH: 256, aspectTolerat: 0.02},
		{name: "training size", w: 256, h: 128, wantW: 256, wantH: 128, aspectTolerat: 0},
		{name: "tiny 20x10 (sides raised to 64)", w: 20, h: 10, wantW: 64, wantH: 64, aspectTolerat: 1},
		{name: "one pixel", w: 1, h: 1, wantW: 64, wantH: 64},
		{name: "huge header 60000x60000", w: 60000, h: 60000, wantErr: "60000x60000"},
		{name: "zero width", w: 0, h: 10, wantErr: "0x10"},
		{name: "cap below 64", w: 640, h: 480, max: 32, wantErr: "maximum network side 32"},
	} {
		t.Run(c.name, func(t *testing.T) {
			w, h, err := NetworkSize(c.w, c.h, c.max)
			if c.wantErr != "" {
				if err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), c.wantErr) {
					t.Fatalf("NetworkSize(%d, %d, %d) = %d, %d, %v; want an error naming %q", c.w, c.h, c.max, w, h, err, c.wantErr)
				}
				return
			}
			if err != nil || w != c.wantW || h != c.wantH {
				t.Fatalf("NetworkSize(%d, %d, %d) = %d, %d, %v; want %d, %d", c.w, c.h, c.max, w, h, err, c.wantW, c.wantH)
			}
			if w%SizeStep != 0 || h%SizeStep != 0 || w*h > MaxNetPixels {
				t.Errorf("%dx%d breaks the multiple-of-32 or pixel bound", w, h)
			}
			if c.aspectTolerat > 0 || c.aspectTolerat == 0 && c.name == "training size" {
				in, out := float64(c.w)/float64(c.h), float64(w)/float64(h)
				if d := math.Abs(out/in - 1); d > c.aspectTolerat {
					t.Errorf("aspect ratio changes by %.3f, want ≤ %v", d, c.aspectTolerat)
				}
			}
		})
	}
}

func pairImages(rng *rand.Rand, w, h, d int) (left, right image.Image) {
	l, r := shiftedPair(rng, h, w, d)
	return l.ToNRGBA(0), r.ToNRGBA(0)
}

// EstimatePair on stereo weights returns the Estimate of the left view at
// the images' size; the kinds refuse each other's calls by name; views of
// different sizes are refused naming both sizes.
func TestEstimatePair(t *testing.T) {
	ws, err := NewWeights(tinyStereoConfig, 3)
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range ws.Params {
		if strings.HasPrefix(name, "res") {
			clear(v) // output the matcher's estimate
		}
	}
	est, err := NewEstimator(ws, nil)
	if err != nil {
		t.Fatal(err)
	}
	if est.Kind() != "stereo" {
		t.Errorf("Kind %q", est.Kind())
	}
	rng := rand.New(rand.NewPCG(2, 3))
	l, r := pairImages(rng, 128, 96, 5) // runs at 128x96
	got, err := est.EstimatePair(context.Background(), l, r)
	if err != nil {
		t.Fatal(err)
	}
	if got.Disparity.Rect != image.Rect(0, 0, 128, 96) || got.Confidence.Rect != got.Disparity.Rect {
		t.Fatalf("bounds %v %v", got.Disparity.Rect, got.Confidence.Rect)
	}
	var sum, conf float64
	var n int
	for y := 10; y < 86; y++ {
		for x := 16; x < 112; x++ {
			v, ok := got.Disparity.At(x, y)
			c, _ := got.Confidence.At(x, y)
			if !ok {
				t.Fatalf("pixel (%d, %d) invalid", x, y)
			}
			sum += math.Abs(float64(v) - 5)
			conf += float64(c)
			n++
		}
	}
	if mean := sum / float64(n); mean > 0.75 {
		t.Errorf("mean |d − 5| = %.3f px in the interior, want ≤ 0.75", mean)
	}
	if conf /= float64(n); conf < 0.5 {
		t.Errorf("mean confidence %.3f where d_L and d_R agree, want ≥ 0.5", conf)
	}
	if _, err := est.Estimate(context.Background(), l); err == nil || !strings.Contains(err.Error(), "stereo weights") {
		t.Errorf("Estimate on stereo weights: %v", err)
	}
	small := image.NewGray(image.Rect(0, 0, 64, 48))
	if _, err := est.EstimatePair(context.Background(), l, small); err == nil || !strings.Contains(err.Error(), "128x96") || !strings.Contains(err.Error(), "64x48") {
		t.Errorf("views of different sizes: %v", err)
	}
	if _, err := est.EstimatePair(context.Background(), l, nil); err == nil || !strings.Contains(err.Error(), "right image is nil") {
		t.Errorf("nil right view: %v", err)
	}
	if _, err := est.EstimatePair(context.Background(), nil, r); err == nil || !strings.Contains(err.Error(), "nil") {
		t.Errorf("nil left view: %v", err)
	}
	mono, err := NewEstimator(tinyWeights(t), nil)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := mono.EstimatePair(context.Background(), l, r); err == nil || !strings.Contains(err.Error(), "one-image weights") {
		t.Errorf("EstimatePair on one-image weights: %v", err)
	}
}

// Concurrent EstimatePair calls at two sizes give each call the result of a
// lone call (the workers keep one Net per size).
func TestEstimatePairConcurrent(t *testing.T) {
	ws, err := NewWeights(tinyStereoConfig, 4)
	if err != nil {
		t.Fatal(err)
	}
	est, err := NewEstimator(ws, &EstimatorOptions{MaxWorkers: 2})
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	type pair struct{ l, r image.Image }
	pairs := []pair{}
	for _, sz := range [][2]int{{96, 64}, {128, 64}} {
		l, r := pairImages(rng, sz[0], sz[1], 3)
		pairs = append(pairs, pair{l, r})
	}
	want := make([][]float32, len(pairs))
	for i, p := range pairs {
		e, err := est.EstimatePair(context.Background(), p.l, p.r)
		if err != nil {
			t.Fatal(err)
		}
		want[i] = e.Disparity.Pix
	}
	var wg sync.WaitGroup
	errs := make(chan error, 8)
	for k := range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			p := pairs[k%2]
			e, err := est.EstimatePair(context.Background(), p.l, p.r)
			if err != nil {
				errs <- err
				return
			}
			for i, v := range e.Disparity.Pix {
				if v != want[k%2][i] {
					t.Errorf("call %d: pixel %d is %v, alone %v", k, i, v, want[k%2][i])
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

// benchmarkPair times EstimatePair on a textured pair of width × height
// with the embedded stereo weights: both images resampled to the network
// size (NetworkSize with the default cap), the matcher, the network on the
// pair and its mirrored copy, confidence and the maps at the input's size.
func benchmarkPair(b *testing.B, width, height int) {
	w, err := DefaultStereo()
	if err != nil {
		b.Fatal(err)
	}
	est, err := NewEstimator(w, &EstimatorOptions{MaxWorkers: 1})
	if err != nil {
		b.Fatal(err)
	}
	l, r := pairImages(rand.New(rand.NewPCG(1, 2)), width, height, width/32)
	ctx := context.Background()
	if _, err := est.EstimatePair(ctx, l, r); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := est.EstimatePair(ctx, l, r); err != nil {
			b.Fatal(err)
		}
	}
}

// benchmarkOne times Estimate with the embedded one-image weights on an
// image of width × height, at the network size NetworkSize gives.
func benchmarkOne(b *testing.B, width, height int) {
	est, err := NewEstimator(nil, &EstimatorOptions{MaxWorkers: 1})
	if err != nil {
		b.Fatal(err)
	}
	l, _ := pairImages(rand.New(rand.NewPCG(1, 2)), width, height, 0)
	ctx := context.Background()
	if _, err := est.Estimate(ctx, l); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := est.Estimate(ctx, l); err != nil {
			b.Fatal(err)
		}
	}
}

// Stereo and one-image estimates at 256×128 (network 256×128) and 640×480
// (network 384×288).
func BenchmarkEstimatePair256x128(b *testing.B) { benchmarkPair(b, 256, 128) }
func BenchmarkEstimatePair640x480(b *testing.B) { benchmarkPair(b, 640, 480) }
func BenchmarkEstimateOne640x480(b *testing.B)  { benchmarkOne(b, 640, 480) }

// xdrawFilter hands golang.org/x/image/draw's CatmullRom to the Estimator
// behind another value, so the Estimator takes the path for a caller's own
// filter: image.RGBA64 scaling with x/image/draw, then planar.FromImageInto.
type xdrawFilter struct{ xdraw.Interpolator }

func (xdrawFilter) Scale(dst xdraw.Image, dr image.Rectangle, src image.Image, sr image.Rectangle, op xdraw.Op, opts *xdraw.Options) {
	xdraw.CatmullRom.Scale(dst, dr, src, sr, op, opts)
}

// TestEstimatorResampleUnchanged checks that the default resampling
// (planar.Resampler) gives the Estimator the same results, bit for bit, as
// x/image/draw's CatmullRom into an RGBA64 image, which it replaced: for
// both kinds of weights, inputs of the network's size and resized ones.
func TestEstimatorResampleUnchanged(t *testing.T) {
	// Small fresh weights: the test is about the input's resampling.
	one, err := NewWeights(tinyConfig, 1)
	if err != nil {
		t.Fatal(err)
	}
	st, err := NewWeights(tinyStereoConfig, 2)
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(8, 3))
	for _, c := range []struct {
		w       *Weights
		iw, ih  int
		network string
	}{{one, 256, 128, "256x128"}, {one, 301, 170, "256x160"}, {st, 200, 150, "192x160"}, {st, 256, 128, "256x128"}} {
		left, right := pairImages(rng, c.iw, c.ih, c.iw/32)
		var res [2]*Estimate
		for i, opt := range []*EstimatorOptions{{MaxSide: 256}, {MaxSide: 256, Resample: xdrawFilter{xdraw.CatmullRom}}} {
			e, err := NewEstimator(c.w, opt)
			if err != nil {
				t.Fatal(err)
			}
			if nw, nh, _ := e.NetworkSize(c.iw, c.ih); fmt.Sprintf("%dx%d", nw, nh) != c.network {
				t.Fatalf("%dx%d runs at %dx%d, the test expects %s", c.iw, c.ih, nw, nh, c.network)
			}
			if e.Kind() == KindStereo {
				res[i], err = e.EstimatePair(context.Background(), left, right)
			} else {
				res[i], err = e.Estimate(context.Background(), left)
			}
			if err != nil {
				t.Fatal(err)
			}
		}
		for i, v := range res[0].Disparity.Pix {
			if w := res[1].Disparity.Pix[i]; v != w && !(math.IsNaN(float64(v)) && math.IsNaN(float64(w))) {
				t.Fatalf("%s weights, %dx%d input: disparity %d is %v, %v with x/image/draw", c.w.Config.Arch, c.iw, c.ih, i, v, w)
			}
		}
		for i, v := range res[0].Confidence.Pix {
			if w := res[1].Confidence.Pix[i]; v != w {
				t.Fatalf("%s weights, %dx%d input: confidence %d is %v, %v with x/image/draw", c.w.Config.Arch, c.iw, c.ih, i, v, w)
			}
		}
	}
}
