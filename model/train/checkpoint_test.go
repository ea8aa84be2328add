package train

import (
	"bytes"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/safetensors"
)

// testCheckpoint returns a valid checkpoint of trainerConfig with moments.
func testCheckpoint(t *testing.T) *Checkpoint {
	t.Helper()
	w := freshWeights(t, 1)
	st := AdamState{Step: 2, M: map[string][]float32{}, V: map[string][]float32{}}
	for name, v := range w.Params {
		st.M[name] = make([]float32, len(v))
		st.V[name] = make([]float32, len(v))
		for i := range v {
			st.M[name][i], st.V[name][i] = 0.5*v[i], v[i]*v[i]
		}
	}
	return &Checkpoint{Weights: w, Solver: st, Step: 3, Steps: 10, Skips: 1, Seed: 42, Batch: 2, BatchesPerEpoch: 5,
		Schedule: Schedule{Rate: 1e-4, Warmup: 1, Milestones: []float64{0.5}, Decay: 0.1}}
}

// A checkpoint survives a save and a load exactly.
func TestCheckpointRoundTrip(t *testing.T) {
	c := testCheckpoint(t)
	path := filepath.Join(t.TempDir(), "c.safetensors")
	if err := SaveCheckpoint(path, c); err != nil {
		t.Fatal(err)
	}
	got, err := LoadCheckpoint(path)
	if err != nil {
		t.Fatal(err)
	}
	if got.Step != 3 || got.Steps != 10 || got.Skips != 1 || got.Seed != 42 || got.Batch != 2 || got.BatchesPerEpoch != 5 || got.Solver.Step != 2 {
		t.Errorf("counters: %+v", got)
	}
	if got.Schedule.Rate != 1e-4 || got.Schedule.Decay != 0.1 || len(got.Schedule.Milestones) != 1 {
		t.Errorf("schedule %+v", got.Schedule)
	}
	for name, v := range c.Weights.Params {
		if !slices.Equal(v, got.Weights.Params[name]) || !slices.Equal(c.Solver.M[name], got.Solver.M[name]) || !slices.Equal(c.Solver.V[name], got.Solver.V[name]) {
			t.Fatalf("tensor %s changed in the round trip", name)
		}
	}
	// No temporary file is left beside it.
	if ents, _ := os.ReadDir(filepath.Dir(path)); len(ents) != 1 {
		t.Errorf("%d files in the checkpoint directory, want 1", len(ents))
	}
}

func firstMoment(ts []safetensors.Tensor) int {
	for i, x := range ts {
		if strings.HasPrefix(x.Name, "adam.m.") {
			return i
		}
	}
	panic("no moment")
}

// Damaged or foreign files are refused with an error that starts with the
// package name and says what is wrong.
func TestCheckpointRejectsBadFiles(t *testing.T) {
	c := testCheckpoint(t)
	dir := t.TempDir()
	good := filepath.Join(dir, "good")
	if err := SaveCheckpoint(good, c); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(good)
	if err != nil {
		t.Fatal(err)
	}
	ts, meta, err := safetensors.Parse(raw)
	if err != nil {
		t.Fatal(err)
	}
	// rewrite returns a file with changed metadata or tensors.
	rewrite := func(edit func(meta map[string]string, ts []safetensors.Tensor) []safetensors.Tensor) []byte {
		m := map[string]string{}
		for k, v := range meta {
			m[k] = v
		}
		cp := append([]safetensors.Tensor(nil), ts...)
		var buf bytes.Buffer
		if err := safetensors.Write(&buf, edit(m, cp), m, safetensors.F32); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	plain := filepath.Join(dir, "weights")
	if err := c.Weights.Save(plain, safetensors.F32); err != nil {
		t.Fatal(err)
	}
	plainBytes, _ := os.ReadFile(plain)

	cases := []struct {
		name string
		b    []byte
		want string
	}{
		{"truncated", raw[:len(raw)-100], "train: checkpoint"},
		{"header only", raw[:8], "train: checkpoint"},
		{"empty", nil, "train: checkpoint"},
		{"weights file", plainBytes, "not a training checkpoint"},
		{"future version", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			m["checkpoint.version"] = "2"
			return ts
		}), `unsupported checkpoint.version "2"`},
		{"missing step", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			delete(m, "checkpoint.step")
			return ts
		}), `"checkpoint.step" is missing`},
		{"counts disagree", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			m["checkpoint.skips"] = "0"
			return ts
		}), "do not add up"},
		{"missing moment", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			i := firstMoment(ts)
			return append(ts[:i], ts[i+1:]...)
		}), "moments of"},
		{"moment shape", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			i := firstMoment(ts)
			ts[i] = safetensors.Tensor{Name: ts[i].Name, Shape: []int{1, len(ts[i].Data)}, Data: ts[i].Data}
			return ts
		}), "has shape"},
		{"stray moment", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			return append(ts, safetensors.Tensor{Name: "adam.m.nothing", Shape: []int{1}, Data: []float32{0}})
		}), `"nothing", which is not a parameter`},
		{"negative second moment", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			for i, x := range ts {
				if strings.HasPrefix(x.Name, "adam.v.") {
					d := append([]float32(nil), x.Data...)
					d[0] = -1
					ts[i].Data = d
					break
				}
			}
			return ts
		}), "invalid value"},
		{"missing weight", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			return ts[1:]
		}), "missing"},
		{"bad schedule", rewrite(func(m map[string]string, ts []safetensors.Tensor) []safetensors.Tensor {
			m["checkpoint.schedule"] = `{"Rate": -1}`
			return ts
		}), "learning rate"},
	}
	for _, tc := range cases {
		p := filepath.Join(dir, strings.ReplaceAll(tc.name, " ", "_"))
		if err := os.WriteFile(p, tc.b, 0o644); err != nil {
			t.Fatal(err)
		}
		_, err := LoadCheckpoint(p)
		if err == nil {
			t.Errorf("%s: loaded", tc.name)
			continue
		}
		if !strings.HasPrefix(err.Error(), "train: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q, want it to start with \"train: \" and contain %q", tc.name, err, tc.want)
		}
	}
	if _, err := LoadCheckpoint(filepath.Join(dir, "absent")); err == nil || !strings.HasPrefix(err.Error(), "train: ") {
		t.Errorf("missing file: %v", err)
	}

	// LoadWeights reads the weights of either kind of file and refuses a
	// damaged checkpoint with LoadCheckpoint's error.
	for _, tc := range []struct {
		path string
		ck   bool
	}{{good, true}, {plain, false}} {
		w, ck, err := LoadWeights(tc.path)
		if err != nil || ck != tc.ck {
			t.Fatalf("LoadWeights(%s) = checkpoint %v, %v", tc.path, ck, err)
		}
		for name, v := range c.Weights.Params {
			if !slices.Equal(w.Params[name], v) {
				t.Fatalf("LoadWeights(%s): %s differs", tc.path, name)
			}
		}
	}
	if _, ck, err := LoadWeights(filepath.Join(dir, "missing_moment")); !ck || err == nil || !strings.Contains(err.Error(), "moments of") {
		t.Errorf("LoadWeights of a damaged checkpoint: %v, %v", ck, err)
	}
	if _, _, err := LoadWeights(filepath.Join(dir, "empty")); err == nil || !strings.HasPrefix(err.Error(), "train: safetensors: ") {
		t.Errorf("LoadWeights of an empty file: %v", err)
	}
}

// Resume refuses a checkpoint of another run set-up.
func TestResumeRefusesOtherRun(t *testing.T) {
	ds := openSynth(t, "greenhouse")
	src, err := NewDatasetSource(ds, trainerConfig, 1, 1, nil)
	if err != nil {
		t.Fatal(err)
	}
	tr := newTestTrainer(t, freshWeights(t, 1), src, TrainerOptions{Steps: 5, Batch: 1, Seed: 1})
	base := func() *Checkpoint {
		c := tr.Checkpoint()
		return c
	}
	for _, tc := range []struct {
		name string
		edit func(*Checkpoint)
		want string
	}{
		{"batch", func(c *Checkpoint) { c.Batch = 2 }, "batch size 2"},
		{"seed", func(c *Checkpoint) { c.Seed = 7 }, "seed 7"},
		{"epoch", func(c *Checkpoint) { c.BatchesPerEpoch = 9 }, "9 batches per epoch"},
		{"past the end", func(c *Checkpoint) { c.Step = 6 }, "past this run's 5 steps"},
		{"other architecture", func(c *Checkpoint) {
			w, err := model.NewWeights(model.Config{Width: 64, Height: 64, Encoder: []int{4, 4, 6, 6, 8}, Decoder: []int{4, 4, 4, 6, 6}}, 1)
			if err != nil {
				t.Fatal(err)
			}
			c.Weights = w
		}, "different architecture"},
	} {
		c := base()
		tc.edit(c)
		if err := tr.Resume(c); err == nil || !strings.HasPrefix(err.Error(), "train: resume") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want an error containing %q", tc.name, err, tc.want)
		}
	}
}
