package train

import (
	"math"
	"runtime"
	"testing"

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
