package model

import (
	"context"
	"image"
	"image/color"
	"math"
	"runtime"
	"sync"
	"testing"
)

// swapImage is a textured test pattern (no external source needed: the
// test compares the Estimator with itself under swaps).
func swapImage(w, h, shift int) *image.RGBA {
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := range h {
		for x := range w {
			v := uint8((x+shift)*37 ^ y*11)
			img.Set(x, y, color.RGBA{v, uint8(x * 3), uint8(y * 5), 255})
		}
	}
	return img
}

// TestSetWeightsAtomic runs many goroutines through Estimate while the
// weights swap back and forth between two sets; every output must equal,
// bit for bit, one of the two reference outputs computed by Estimators
// that never swapped. A torn swap (a network rebound layer by layer, a
// stage reused across weights) would produce a third output. Run it under
// -race to check the swap is also free of data races.
func TestSetWeightsAtomic(t *testing.T) {
	wa := tinyWeights(t)
	wb, err := NewWeights(tinyConfig, 2)
	if err != nil {
		t.Fatal(err)
	}
	opt := &EstimatorOptions{MaxWorkers: 4, Validity: ValidityOptions{MinConfidence: ValidityOff, MinTexture: ValidityOff}}
	img := swapImage(130, 66, 0) // not the network size: the resampling runs too
	ref := func(w *Weights) []float32 {
		e, err := NewEstimator(w, opt)
		if err != nil {
			t.Fatal(err)
		}
		est, err := e.Estimate(context.Background(), img)
		if err != nil {
			t.Fatal(err)
		}
		return est.Disparity.Pix
	}
	ra, rb := ref(wa), ref(wb)
	if sameBits(ra, rb) {
		t.Fatal("the two weights give the same output: the test could not tell them apart")
	}
	e, err := NewEstimator(wa, opt)
	if err != nil {
		t.Fatal(err)
	}
	const goroutines, calls = 8, 12
	var wg sync.WaitGroup
	var mu sync.Mutex
	seen := [2]int{}
	errs := make(chan error, goroutines)
	for range goroutines {
		wg.Go(func() {
			for range calls {
				est, err := e.Estimate(context.Background(), img)
				if err != nil {
					errs <- err
					return
				}
				switch {
				case sameBits(est.Disparity.Pix, ra):
					mu.Lock()
					seen[0]++
					mu.Unlock()
				case sameBits(est.Disparity.Pix, rb):
					mu.Lock()
					seen[1]++
					mu.Unlock()
				default:
					t.Error("an output matches neither the old nor the new weights")
					return
				}
			}
		})
	}
	done := make(chan struct{})
	go func() { wg.Wait(); close(done) }()
	for i := 0; ; i++ {
		select {
		case <-done:
			close(errs)
			for err := range errs {
				t.Fatal(err)
			}
			if seen[0] == 0 || seen[1] == 0 {
				t.Errorf("outputs of weights a, b: %v; the swaps never showed during the calls", seen)
			}
			t.Logf("outputs of weights a, b: %v after %d swaps", seen, i)
			return
		default:
		}
		w := wa
		if i%2 == 0 {
			w = wb
		}
		if err := e.SetWeights(w); err != nil {
			t.Fatal(err)
		}
		if e.Weights() != w {
			t.Fatal("Weights does not return the weights just set")
		}
	}
}

func sameBits(a, b []float32) bool {
	if len(a) != len(b) {
		return false
	}
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return false
		}
	}
	return true
}

func TestSetWeightsRefusesOtherConfig(t *testing.T) {
	e, err := NewEstimator(tinyWeights(t), nil)
	if err != nil {
		t.Fatal(err)
	}
	c := tinyConfig
	c.Width = 64
	other, err := NewWeights(c, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := e.SetWeights(other); err == nil {
		t.Error("weights of another input size were accepted")
	}
	if err := e.SetWeights(nil); err == nil {
		t.Error("nil weights were accepted")
	}
	bad := tinyWeights(t)
	for name := range bad.Params {
		bad.Params[name] = bad.Params[name][:1]
		break
	}
	if err := e.SetWeights(bad); err == nil {
		t.Error("weights with a truncated parameter were accepted")
	}
}

// TestSetWeightsAllocatesNothing: an Estimate after a swap allocates about
// what one without does (its result maps) plus SetWeights' check of the
// new weights' architecture: the worker's network is pointed at the new
// parameters, not rebuilt (which allocated a Net, tens of MB per worker
// and swap at a camera's size). The output after the swap equals a fresh
// Estimator's on the new weights, bit for bit.
func TestSetWeightsAllocatesNothing(t *testing.T) {
	wa := tinyWeights(t)
	wb, err := NewWeights(tinyConfig, 2)
	if err != nil {
		t.Fatal(err)
	}
	opt := &EstimatorOptions{MaxWorkers: 1, Validity: ValidityOptions{MinConfidence: ValidityOff, MinTexture: ValidityOff}}
	img := swapImage(130, 66, 0)
	ctx := context.Background()
	e, err := NewEstimator(wa, opt)
	if err != nil {
		t.Fatal(err)
	}
	allocated := func(f func()) uint64 { // bytes, over 5 calls
		var a, b runtime.MemStats
		runtime.ReadMemStats(&a)
		for range 5 {
			f()
		}
		runtime.ReadMemStats(&b)
		return b.TotalAlloc - a.TotalAlloc
	}
	estimate := func() {
		if _, err := e.Estimate(ctx, img); err != nil {
			t.Fatal(err)
		}
	}
	estimate()
	plain := allocated(estimate)
	check := allocated(func() {
		if _, err := wb.Arch(); err != nil {
			t.Fatal(err)
		}
	})
	ws := []*Weights{wb, wa}
	i := 0
	swapped := allocated(func() {
		if err := e.SetWeights(ws[i%2]); err != nil {
			t.Fatal(err)
		}
		i++
		estimate()
	})
	t.Logf("bytes over 5 calls: Estimate %d, Arch %d, swap and Estimate %d", plain, check, swapped)
	if swapped > 2*(plain+check) {
		t.Errorf("a swap and an Estimate allocate %d bytes over 5 calls; an Estimate alone %d and the weights' check %d", swapped, plain, check)
	}
	if err := e.SetWeights(wb); err != nil {
		t.Fatal(err)
	}
	got, err := e.Estimate(ctx, img)
	if err != nil {
		t.Fatal(err)
	}
	fresh, err := NewEstimator(wb, opt)
	if err != nil {
		t.Fatal(err)
	}
	want, err := fresh.Estimate(ctx, img)
	if err != nil {
		t.Fatal(err)
	}
	if !sameBits(got.Disparity.Pix, want.Disparity.Pix) {
		t.Error("after the swap the Estimator's output differs from a fresh Estimator's on the new weights")
	}
}
