package train

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/loss"
)

// TestFilesWithDefaults: empty names follow the weights' path; given ones
// stay.
func TestFilesWithDefaults(t *testing.T) {
	got := Files{Weights: "run/w.safetensors", Plot: "curve.png"}.WithDefaults()
	want := Files{Weights: "run/w.safetensors", Checkpoint: "run/w.safetensors.ckpt", Log: "run/w.csv", Plot: "curve.png"}
	if got != want {
		t.Errorf("got %+v, want %+v", got, want)
	}
}

// TestFilesPrepare: a fresh run refuses an earlier run's checkpoint, a
// resumed one takes it; stale temporaries of the outputs are removed and
// returned.
func TestFilesPrepare(t *testing.T) {
	dir := t.TempDir()
	f := Files{Weights: filepath.Join(dir, "w.safetensors")}.WithDefaults()
	os.WriteFile(f.Checkpoint, []byte("an earlier run"), 0o644)
	stale := filepath.Join(dir, ".w.csv.tmp77")
	os.WriteFile(stale, []byte("half a log"), 0o644)
	if _, err := f.Prepare(false); err == nil || !strings.Contains(err.Error(), "exists from an earlier run") {
		t.Errorf("fresh run over a checkpoint: %v", err)
	}
	if _, err := os.Stat(stale); err != nil {
		t.Error("a refused run removed a file")
	}
	removed, err := f.Prepare(true)
	if err != nil || len(removed) != 1 || removed[0] != stale {
		t.Errorf("resume: removed %v, %v", removed, err)
	}
}

// TestJobOpenErrors: a set too small for one batch and Run before Open are
// errors, before any file is written.
func TestJobOpenErrors(t *testing.T) {
	dir := t.TempDir()
	j := &Job{Files: Files{Weights: filepath.Join(dir, "w.safetensors")}, Data: &dataset.Set{Pairs: make([]dataset.PairFiles, 2)}, Options: TrainerOptions{Batch: 3}}
	if err := j.Open(); err == nil || !strings.Contains(err.Error(), "2 training pairs make no batch of 3") {
		t.Errorf("Open: %v", err)
	}
	if _, err := (&Job{}).Run(context.Background()); err == nil || !strings.Contains(err.Error(), "before Open") {
		t.Errorf("Run before Open: %v", err)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("%d files written", len(ents))
	}
}

// TestJobSummary: the loss table holds the means of the first and last
// ten steps that were not skipped, computed here by hand from the rows.
func TestJobSummary(t *testing.T) {
	j := &Job{Files: Files{Weights: "w.safetensors"}.WithDefaults(), Options: TrainerOptions{Batch: 2}}
	for s := 1; s <= 25; s++ {
		// Total = step; step 3 skipped.
		j.Log.Add(Progress{Step: s, Terms: loss.Terms{Total: float64(s)}, Skipped: s == 3})
	}
	var b strings.Builder
	if err := j.WriteSummary(&b, &JobResult{RunResult: RunResult{Step: 25, Skips: 1, Collapses: 2, Checkpoint: "w.safetensors.ckpt"}, Steps: 25, Took: 5e9}); err != nil {
		t.Fatal(err)
	}
	// first ten not skipped: 1, 2, 4…11 → 63/10; last ten: 16…25 → 20.5.
	for _, want := range []string{"trained to step 25", "5.00 steps/s", "1 skipped", "w.safetensors.ckpt", "w.csv", "6.30000  20.50000", "2 time(s)"} {
		if !strings.Contains(b.String(), want) {
			t.Errorf("summary lacks %q:\n%s", want, b.String())
		}
	}
}

// TestProgressNote: skipped and collapsed steps are told, others not.
func TestProgressNote(t *testing.T) {
	for _, c := range []struct {
		p    Progress
		want string
	}{
		{Progress{Step: 4}, ""},
		{Progress{Step: 4, Skipped: true, SkipReason: "NaN in the batch"}, "step 4 skipped: NaN in the batch"},
		{Progress{Step: 5, Collapsed: true, Spread: 0.001}, "training has collapsed"},
	} {
		if got := c.p.Note(); (c.want == "") != (got == "") || !strings.Contains(got, c.want) {
			t.Errorf("%+v: %q, want %q", c.p, got, c.want)
		}
	}
}
