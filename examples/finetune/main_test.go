package main

import (
	"context"
	"image"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
)

func defaults(dataDir, out string) config {
	return config{data: dataDir, out: out, steps: 2, batch: 1, lr: train.DefaultRate, every: 1, seed: 1, val: 0.34, evalBatch: 3, quiet: true}
}

// A short run on the committed synthetic pairs writes loadable weights, a
// checkpoint, a CSV log with one row per step and a PNG, and -resume after
// the end of the run refuses nothing but trains no further.
func TestRunWritesOutputs(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	c := defaults(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out)
	if err := run(c); err != nil {
		t.Fatal(err)
	}
	w, err := model.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if w.Provenance["train.steps"] != "2" {
		t.Errorf("provenance %v", w.Provenance)
	}
	ck, err := train.LoadCheckpoint(out + ".ckpt")
	if err != nil || ck.Step != 2 {
		t.Fatalf("checkpoint: %v, %+v", err, ck)
	}
	log, err := os.ReadFile(filepath.Join(dir, "w.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(log)), "\n")
	if len(lines) != 3 || !strings.HasPrefix(lines[0], "step,epoch,batch,learning_rate,appearance") || !strings.HasPrefix(lines[2], "2,") {
		t.Errorf("log:\n%s", log)
	}
	png, err := os.ReadFile(filepath.Join(dir, "w.png"))
	if err != nil || len(png) < 8 || string(png[1:4]) != "PNG" {
		t.Errorf("plot: %v, %d bytes", err, len(png))
	}
	// Resume a finished run with more steps: it continues from step 2.
	c.resume, c.steps = true, 3
	if err := run(c); err != nil {
		t.Fatal(err)
	}
	if ck, err = train.LoadCheckpoint(out + ".ckpt"); err != nil || ck.Step != 3 {
		t.Fatalf("resumed checkpoint: %v, %+v", err, ck)
	}
	log, _ = os.ReadFile(filepath.Join(dir, "w.csv"))
	if n := len(strings.Split(strings.TrimSpace(string(log)), "\n")); n != 4 {
		t.Errorf("resumed log has %d lines, want 4", n)
	}
}

// An interrupted run (here, a context cancelled before the first step)
// still writes the weights so far, marked as interrupted, and a checkpoint
// that -resume continues from.
func TestRunInterruptedWritesWeights(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	c := defaults(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	c.ctx = ctx
	if err := run(c); err != nil {
		t.Fatal(err)
	}
	w, err := model.Load(out)
	if err != nil {
		t.Fatalf("no weights after an interrupted run: %v", err)
	}
	if got := w.Provenance["train.interrupted"]; got != "at step 0 of 2" {
		t.Errorf("train.interrupted = %q, want %q", got, "at step 0 of 2")
	}
	if _, err := train.LoadCheckpoint(out + ".ckpt"); err != nil {
		t.Fatalf("checkpoint: %v", err)
	}
	c.ctx, c.resume = nil, true
	if err := run(c); err != nil {
		t.Fatal(err)
	}
	if w, err = model.Load(out); err != nil || w.Provenance["train.interrupted"] != "" {
		t.Fatalf("resumed run: %v, provenance %v", err, w.Provenance)
	}
}

// Bad input gets clear errors that start with the command's name.
func TestRunErrors(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty")
	os.MkdirAll(filepath.Join(empty, "left"), 0o755)
	os.MkdirAll(filepath.Join(empty, "right"), 0o755)
	lonely := filepath.Join(dir, "lonely")
	os.MkdirAll(filepath.Join(lonely, "left"), 0o755)
	os.MkdirAll(filepath.Join(lonely, "right"), 0o755)
	src, _ := os.ReadFile(filepath.Join("..", "..", "testdata", "synth", "greenhouse", "left", "000000.png"))
	os.WriteFile(filepath.Join(lonely, "left", "a.png"), src, 0o644)
	mismatch := filepath.Join(dir, "mismatch")
	os.MkdirAll(filepath.Join(mismatch, "left"), 0o755)
	os.MkdirAll(filepath.Join(mismatch, "right"), 0o755)
	os.WriteFile(filepath.Join(mismatch, "left", "b.png"), src, 0o644)
	small, _ := os.Create(filepath.Join(mismatch, "right", "b.png"))
	png.Encode(small, image.NewGray(image.Rect(0, 0, 64, 32)))
	small.Close()
	bad := filepath.Join(dir, "bad.safetensors")
	os.WriteFile(bad, []byte("not weights"), 0o644)
	synthDir := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	out := filepath.Join(dir, "w.safetensors")
	earlier := filepath.Join(dir, "earlier.ckpt")
	os.WriteFile(earlier, []byte("an earlier run's state"), 0o644)
	cases := []struct {
		name string
		edit func(*config)
		want string
	}{
		{"no data", func(c *config) { c.data = "" }, "-data DIR and -out FILE are required"},
		{"missing dir", func(c *config) { c.data = filepath.Join(dir, "nowhere") }, "is not a folder"},
		{"no pairs", func(c *config) { c.data = empty }, "holds no images"},
		{"missing partner", func(c *config) { c.data = lonely }, "a.png"},
		{"mismatched sizes", func(c *config) { c.data = mismatch }, "b.png"},
		{"bad weights", func(c *config) { c.from = bad }, "-from"},
		{"both starts", func(c *config) { c.from, c.scratch = bad, true }, "exclude each other"},
		{"resume without checkpoint", func(c *config) { c.resume = true; c.checkpoint = filepath.Join(dir, "none.ckpt") }, "-resume"},
		{"batch too large", func(c *config) { c.batch = 5 }, "make no batch of 5"},
		{"zero steps", func(c *config) { c.steps = 0 }, "must be positive"},
		{"earlier checkpoint", func(c *config) { c.checkpoint = earlier }, "exists from an earlier run"},
		{"no output folder", func(c *config) { c.out = filepath.Join(dir, "nowhere", "w.safetensors") }, "nowhere does not exist"},
		{"no log folder", func(c *config) { c.logPath = filepath.Join(dir, "nowhere", "log.csv") }, "-log"},
	}
	for _, tc := range cases {
		c := defaults(synthDir, out)
		tc.edit(&c)
		err := run(c)
		if err == nil || !strings.HasPrefix(err.Error(), "finetune: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want an error containing %q", tc.name, err, tc.want)
		} else {
			t.Logf("%s: %v", tc.name, err)
		}
	}
	if _, err := os.Stat(out); err == nil {
		t.Errorf("a failed run wrote %s", out)
	}
	if b, _ := os.ReadFile(earlier); string(b) != "an earlier run's state" {
		t.Errorf("a fresh run changed the earlier checkpoint: %q", b)
	}
}

// Resuming with another -steps or -lr is allowed but noted.
func TestScheduleNote(t *testing.T) {
	ck := &train.Checkpoint{Step: 40, Steps: 100, Schedule: train.Schedule{Rate: train.DefaultRate}}
	c := config{steps: 100, lr: train.DefaultRate}
	if n := scheduleNote(ck, c); n != "" {
		t.Errorf("same schedule: %q", n)
	}
	for _, edit := range []func(*config){func(c *config) { c.steps = 200 }, func(c *config) { c.lr = 1e-4 }, func(c *config) { c.milestones = "0.6,0.8" }} {
		d := c
		edit(&d)
		if n := scheduleNote(ck, d); !strings.HasPrefix(n, "finetune: note: ") || !strings.Contains(n, "from step 40") {
			t.Errorf("config %+v: note %q", d, n)
		}
	}
	// A checkpoint with milestones resumed with the same ones, written
	// another way, is the same schedule.
	ck.Schedule.Milestones = []float64{0.6, 0.8}
	if n := scheduleNote(ck, config{steps: 100, lr: train.DefaultRate, milestones: "0.60, 0.8"}); n != "" {
		t.Errorf("same milestones: %q", n)
	}
	for _, bad := range []string{"0.6,x", "0.6,,0.8"} {
		if _, err := parseMilestones(bad); err == nil || !strings.HasPrefix(err.Error(), "finetune: ") {
			t.Errorf("-milestones %q: error %v", bad, err)
		}
	}
}
