package model

import (
	"context"
	"fmt"
	"image"
	"image/color"
	"runtime"
	"strings"
	"sync"
	"testing"
)

// TestScratchBytes compares the scratch a stage is counted to need
// (stageBytes, from the architecture) with the heap (HeapAlloc delta) that
// a worker takes when it builds that stage and runs one image or pair
// through it, for both embedded networks.
func TestScratchBytes(t *testing.T) {
	sizes := [][2]int{{256, 128}, {640, 480}}
	if testing.Short() {
		sizes = sizes[:1]
	}
	for _, kind := range []string{"one-image", "stereo"} {
		w, err := Default()
		if kind == "stereo" {
			w, err = DefaultStereo()
		}
		if err != nil {
			t.Fatal(err)
		}
		for _, sz := range sizes {
			e, err := NewEstimator(w, &EstimatorOptions{MaxWorkers: 1})
			if err != nil {
				t.Fatal(err)
			}
			img := image.NewRGBA(image.Rect(0, 0, sz[0], sz[1]))
			for i := range img.Pix {
				img.Pix[i] = uint8(i * 7 % 251)
			}
			img.Set(0, 0, color.White)
			c := w.Config
			c.Width, c.Height = sz[0], sz[1]
			a, err := Build(c)
			if err != nil {
				t.Fatal(err)
			}
			want := stageBytes(a)
			wk := &worker{}
			h0 := heapAlloc()
			st, err := e.stage(wk, w, sz[0], sz[1])
			if err != nil {
				t.Fatal(err)
			}
			if kind == "stereo" {
				err = e.predictPair(st, img, img)
			} else {
				err = e.predict(context.Background(), st, img)
			}
			if err != nil {
				t.Fatal(err)
			}
			used := int64(heapAlloc() - h0)
			t.Logf("%s stage at %dx%d: counted %s, heap %s", kind, sz[0], sz[1], mib(want), mib(used))
			if float64(want) < 0.95*float64(used) || float64(want) > 1.10*float64(used) {
				t.Errorf("%s stage at %dx%d: counted %s, the heap grew by %s (want the count within −5 %% and +10 %%)", kind, sz[0], sz[1], mib(want), mib(used))
			}
			runtime.KeepAlive(wk)
			runtime.KeepAlive(e)
		}
	}
}

// TestMaxScratchBytes checks the pool under a scratch cap: as many
// workers as fit (never more than MaxWorkers), an error naming both
// figures and the network size when one does not fit, and workers whose
// stages, after calls at several network sizes from several goroutines,
// hold no more than the cap together.
func TestMaxScratchBytes(t *testing.T) {
	w, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	for _, side := range []int{256, DefaultMaxSide, 640} {
		e, err := NewEstimator(w, &EstimatorOptions{MaxWorkers: 3, MaxSide: side})
		if err != nil {
			t.Fatal(err)
		}
		c := w.Config
		c.Width, c.Height = side, side
		a, err := Build(c)
		if err != nil {
			t.Fatal(err)
		}
		// At a MaxSide up to 724 the square side × side is the largest size.
		if e.WorkerBytes() != stageBytes(a) || e.Workers() != 3 {
			t.Errorf("MaxSide %d: WorkerBytes %d, Workers %d; want the stage at %dx%d, %d, and 3", side, e.WorkerBytes(), e.Workers(), side, side, stageBytes(a))
		}
		t.Logf("MaxSide %d: a worker of the default network is counted at %s", side, mib(e.WorkerBytes()))
	}
	e, err := NewEstimator(w, &EstimatorOptions{MaxWorkers: 4, MaxSide: 256})
	if err != nil {
		t.Fatal(err)
	}
	per := e.WorkerBytes()
	for _, c := range []struct {
		limit int64
		want  int
	}{{per, 1}, {2*per + per/2, 2}, {100 * per, 4}} {
		e, err := NewEstimator(w, &EstimatorOptions{MaxWorkers: 4, MaxSide: 256, MaxScratchBytes: c.limit})
		if err != nil {
			t.Fatal(err)
		}
		if e.Workers() != c.want {
			t.Errorf("MaxScratchBytes %d (%.2f workers' worth): %d workers, want %d", c.limit, float64(c.limit)/float64(per), e.Workers(), c.want)
		}
	}
	_, err = NewEstimator(w, &EstimatorOptions{MaxSide: 256, MaxScratchBytes: per - 1})
	if err == nil || !strings.Contains(err.Error(), mib(per)) || !strings.Contains(err.Error(), "256x256") || !strings.Contains(err.Error(), fmt.Sprint(per-1)) {
		t.Errorf("a cap one byte short of a worker: error %v, want one naming %s, %d bytes and 256x256", err, mib(per), per-1)
	}
	if _, err := NewEstimator(w, &EstimatorOptions{MaxScratchBytes: -1}); err == nil {
		t.Error("a negative MaxScratchBytes is accepted")
	}

	// Two workers' worth and a little: calls at four network sizes from
	// four goroutines, two each (a worker holding 256×128 and 128×256
	// exceeds its share, so it drops one).
	limit := 2*per + per/4
	e, err = NewEstimator(w, &EstimatorOptions{MaxWorkers: 4, MaxSide: 256, MaxScratchBytes: limit})
	if err != nil {
		t.Fatal(err)
	}
	var wg sync.WaitGroup
	errs := make(chan error, 16)
	for g := range 4 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range 2 {
				sz := [][2]int{{256, 128}, {128, 256}, {192, 96}, {64, 64}}[(g+i)%4]
				if _, err := e.Estimate(context.Background(), image.NewGray(image.Rect(0, 0, sz[0], sz[1]))); err != nil {
					errs <- err
				}
			}
		}()
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
	// One worker at 256×128, then 128×256: the two exceed its share, so
	// the first is dropped; 64×64 then fits beside the second.
	wk := &worker{}
	for _, sz := range [][2]int{{256, 128}, {128, 256}, {64, 64}} {
		if _, err := e.stage(wk, w, sz[0], sz[1]); err != nil {
			t.Fatal(err)
		}
	}
	if len(wk.stages) != 2 || wk.stages[0].w != 64 || wk.stages[1].w != 128 || wk.stages[0].bytes+wk.stages[1].bytes > per {
		t.Errorf("a worker's stages after 256x128, 128x256, 64x64 under a share of %d bytes: %d of them", per, len(wk.stages))
	}
	var held int64
	workers := 0
	for wk, ok := e.pool.TryGet(); ok; wk, ok = e.pool.TryGet() {
		workers++
		for _, st := range wk.stages {
			held += st.bytes
		}
	}
	if workers > 2 || held > limit {
		t.Errorf("under a cap of %d bytes: %d workers holding %d bytes", limit, workers, held)
	}
}
