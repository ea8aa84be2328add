package train

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"
	"time"

	"github.com/parallaxdepth/parallax/internal/parallel"
	"github.com/parallaxdepth/parallax/model"
)

// TestSetWorkers: a Session bounded to one worker sets the bound on every
// kernel of its graph (internal/parallel's TestForNBound checks that the
// bound holds), and trains to the same bits as an unbounded one on 4
// goroutines (the kernels' sums do not depend on the goroutines). A
// negative count is refused.
func TestSetWorkers(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(4))
	left, right, w := tinyPair(t)
	train := func(workers int) *model.Weights {
		s, err := NewSession(w, 1, nil, &AdamConfig{LearningRate: 3e-3})
		if err != nil {
			t.Fatal(err)
		}
		defer s.Close()
		if err := s.SetWorkers(workers); err != nil {
			t.Fatal(err)
		}
		ops := 0
		for _, n := range s.net.Graph.AllNodes() {
			if op, ok := n.Op().(*kernelOp); ok {
				ops++
				if int(op.procs) != workers {
					t.Fatalf("kernel %s %q bounded to %d goroutines, want %d", op.kind, op.name, op.procs, workers)
				}
			}
		}
		if ops < 20 {
			t.Fatalf("only %d kernels in the graph", ops)
		}
		for range 3 {
			if _, err := s.Step(left, right); err != nil {
				t.Fatal(err)
			}
		}
		return s.Weights()
	}
	one, all := train(1), train(0)
	for name, v := range one.Params {
		for i := range v {
			if math.Float32bits(v[i]) != math.Float32bits(all.Params[name][i]) {
				t.Fatalf("%s[%d]: %v with one worker, %v with four", name, i, v[i], all.Params[name][i])
			}
		}
	}
	s, err := NewSession(w, 1, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	if err := s.SetWorkers(-1); err == nil {
		t.Error("SetWorkers(-1) accepted")
	}
}

// TestSetWorkersStereo: with GOMAXPROCS 4, training steps of a stereo
// Session bounded to 1 or 2 workers run at most that many parallel ranges
// at once (counted by internal/parallel), the matcher's among them, and
// train to the same bits as unbounded steps, which run more than one at once.
func TestSetWorkersStereo(t *testing.T) {
	defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(4))
	rng := rand.New(rand.NewPCG(3, 4))
	w := perturbedWeights(t, tinyStereo, 5, rng)
	PrepareHeads(w)
	left, right := randomImage(rng, 1, 3, 64, 64), randomImage(rng, 1, 3, 64, 64)
	train := func(workers int) (*model.Weights, int) {
		s, err := NewSession(w, 1, nil, &AdamConfig{LearningRate: 1e-3})
		if err != nil {
			t.Fatal(err)
		}
		defer s.Close()
		if err := s.SetWorkers(workers); err != nil {
			t.Fatal(err)
		}
		peak := parallel.PeakRanges(func() {
			for range 2 {
				if _, err = s.Step(left, right); err != nil {
					return
				}
			}
		})
		if err != nil {
			t.Fatal(err)
		}
		return s.Weights(), peak
	}
	want, peak := train(0)
	for try := 0; try < 20 && peak < 2; try++ { // a loaded machine may run the ranges one by one
		time.Sleep(20 * time.Millisecond)
		want, peak = train(0)
	}
	t.Logf("unbounded: %d ranges at once", peak)
	if peak < 2 {
		t.Errorf("unbounded: at most %d ranges at once; want more than 1", peak)
	}
	for _, workers := range []int{1, 2} {
		got, peak := train(workers)
		t.Logf("%d workers: %d ranges at once", workers, peak)
		if peak > workers {
			t.Errorf("%d workers: %d ranges at once", workers, peak)
		}
		for name, v := range got.Params {
			for i := range v {
				if math.Float32bits(v[i]) != math.Float32bits(want.Params[name][i]) {
					t.Fatalf("%d workers: %s[%d] is %v, unbounded %v", workers, name, i, v[i], want.Params[name][i])
				}
			}
		}
	}
}
