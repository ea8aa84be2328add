package train

import (
	"context"
	"math"
	"testing"
)

func TestTmpDeterminism(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	run := func(steps int) *Checkpoint {
		src, _ := NewDatasetSource(ds, trainerConfig, 1, 5, nil)
		tr := newTestTrainer(t, freshWeights(t, 9), src, Options{Steps: steps, Batch: 1, Seed: 5})
		if _, err := tr.Run(context.Background()); err != nil {
			t.Fatal(err)
		}
		return tr.Checkpoint()
	}
	for _, steps := range []int{1, 2, 5} {
		a, b := run(steps), run(steps)
		n := 0
		for name, v := range a.Weights.Params {
			for i := range v {
				if math.Float32bits(v[i]) != math.Float32bits(b.Weights.Params[name][i]) {
					n++
				}
			}
		}
		t.Logf("steps %d: %d differing values", steps, n)
	}
}
