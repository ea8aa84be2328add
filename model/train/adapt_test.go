package train

import (
	"context"
	"math"
	"path/filepath"
	"slices"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
)

// adaptInputs returns the committed greenhouse pairs and the embedded
// one-image weights, which the Adapt tests adapt.
func adaptInputs(t *testing.T) (*dataset.Set, *model.Weights) {
	t.Helper()
	set, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "greenhouse"))
	if err != nil {
		t.Fatal(err)
	}
	w, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	return set, w
}

// TestAdapt: two steps on a tiny set change the weights, leave the input
// weights alone and report two steps; a cancelled context still returns
// weights with Interrupted; nil weights are an error.
func TestAdapt(t *testing.T) {
	set, w := adaptInputs(t)
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

// TestAdaptLearningRate: AdaptOptions.LearningRate reaches Adam. Adam's
// first step moves each parameter by rate·g/(|g|+ε) (Kingma & Ba 2015,
// algorithm 1, with m̂ = g and v̂ = g² after one step), so on the same batch
// twice the rate moves every parameter twice as far; 0 is DefaultRate.
func TestAdaptLearningRate(t *testing.T) {
	set, w := adaptInputs(t)
	moved := map[float64]map[string][]float32{}
	for _, rate := range []float64{0, DefaultRate, 2 * DefaultRate} {
		out, _, err := Adapt(context.Background(), w, set, &AdaptOptions{Steps: 1, Batch: 1, LearningRate: rate})
		if err != nil {
			t.Fatal(err)
		}
		moved[rate] = out.Params
	}
	var n int
	for k, v := range w.Params {
		for i := range v {
			d0, d1, d2 := moved[0][k][i]-v[i], moved[DefaultRate][k][i]-v[i], moved[2*DefaultRate][k][i]-v[i]
			if d0 != d1 {
				t.Fatalf("%s[%d]: moved %g at rate 0, %g at DefaultRate", k, i, d0, d1)
			}
			// Parameters whose move is well above float32's spacing at their value.
			if math.Abs(float64(d1)) > 1e-5 {
				n++
				if r := float64(d2) / float64(d1); math.Abs(r-2) > 0.01 {
					t.Fatalf("%s[%d]: moved %g at DefaultRate, %g at twice it (ratio %.4f, want 2)", k, i, d1, d2, r)
				}
			}
		}
	}
	if n < 1000 {
		t.Fatalf("only %d parameters moved by more than 1e-5 in one step", n)
	}
	if _, _, err := Adapt(context.Background(), w, set, &AdaptOptions{Steps: 1, LearningRate: -1}); err == nil {
		t.Error("a negative learning rate is accepted")
	}
}

// TestAdaptObjective: AdaptOptions.Objective reaches the trainer: the
// defaults written out give the weights nil gives, and another smoothness
// weight gives other weights.
func TestAdaptObjective(t *testing.T) {
	set, w := adaptInputs(t)
	def, smooth := loss.DefaultObjectiveOptions(), loss.DefaultObjectiveOptions()
	smooth.Smoothness = 1
	var got []*model.Weights
	for _, o := range []*loss.ObjectiveOptions{nil, &def, &smooth} {
		out, _, err := Adapt(context.Background(), w, set, &AdaptOptions{Steps: 2, Batch: 1, Objective: o})
		if err != nil {
			t.Fatal(err)
		}
		got = append(got, out)
	}
	same := func(a, b *model.Weights) bool {
		for k, v := range a.Params {
			if !slices.Equal(v, b.Params[k]) {
				return false
			}
		}
		return true
	}
	if !same(got[0], got[1]) {
		t.Error("the default objective written out adapts otherwise than nil")
	}
	if same(got[0], got[2]) {
		t.Error("smoothness 1 adapts as smoothness 0.1 does: the objective is not used")
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
