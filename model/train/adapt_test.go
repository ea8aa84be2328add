package train

import (
	"context"
	"path/filepath"
	"slices"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
)

// TestAdapt: two steps on a tiny set change the weights, leave the input
// weights alone and report two steps; a cancelled context still returns
// weights with Interrupted; nil weights are an error.
func TestAdapt(t *testing.T) {
	set, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "greenhouse"))
	if err != nil {
		t.Fatal(err)
	}
	w, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	orig := map[string][]float32{}
	for k, v := range w.Params {
		orig[k] = slices.Clone(v)
	}
	var steps []int
	out, res, err := Adapt(context.Background(), w, set, &AdaptOptions{Steps: 2, Batch: 9, Flip: true, Progress: func(p Progress) { steps = append(steps, p.Step) }})
	if err != nil {
		t.Fatal(err)
	}
	if res.Step != 2 || !slices.Equal(steps, []int{1, 2}) || res.Interrupted {
		t.Errorf("result %+v, progress %v", res, steps)
	}
	changed := 0
	for k, v := range orig {
		if !slices.Equal(w.Params[k], v) {
			t.Fatalf("Adapt changed its input's %s", k)
		}
		if !slices.Equal(out.Params[k], v) {
			changed++
		}
	}
	if changed == 0 {
		t.Error("Adapt left every parameter unchanged")
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if out, res, err := Adapt(ctx, w, set, &AdaptOptions{Steps: 5, Batch: 1}); err != nil || !res.Interrupted || out == nil {
		t.Errorf("cancelled: %v %+v", err, res)
	}
	if _, _, err := Adapt(context.Background(), nil, set, nil); err == nil {
		t.Error("nil weights adapted")
	}
}
