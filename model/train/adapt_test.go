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

// Adapt trains at the size an Estimator runs the set's images at: the
// 370×250 Motorcycle pair at 384×256 (its aspect ratio, not the weights'
// 256×128); a 256×128 set at 256×128; the weights it returns keep their own
// size in the config.
func TestAdaptSize(t *testing.T) {
	w, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join("..", "..", "testdata", "motorcycle")
	moto, err := dataset.FromFiles(filepath.Join(dir, "left.png"), filepath.Join(dir, "right.png"), nil, "")
	if err != nil {
		t.Fatal(err)
	}
	synth, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "greenhouse"))
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		set      *dataset.Set
		max      int
		wantW, h int
	}{{moto, 0, 384, 256}, {moto, 256, 256, 160}, {synth, 0, 256, 128}} {
		run, err := adaptSize(w, c.set, c.max)
		if err != nil {
			t.Fatal(err)
		}
		if run.Config.Width != c.wantW || run.Config.Height != c.h {
			t.Errorf("%dx%d pairs, max side %d: trained at %dx%d, want %dx%d", c.set.Pairs[0].Width, c.set.Pairs[0].Height, c.max,
				run.Config.Width, run.Config.Height, c.wantW, c.h)
		}
	}
	out, _, err := Adapt(context.Background(), w, moto, &AdaptOptions{Steps: 1, Batch: 1})
	if err != nil {
		t.Fatal(err)
	}
	if out.Config.Width != w.Config.Width || out.Config.Height != w.Config.Height {
		t.Errorf("adapted weights' config %dx%d, want the input's %dx%d", out.Config.Width, out.Config.Height, w.Config.Width, w.Config.Height)
	}
}
