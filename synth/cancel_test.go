package synth

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestWriteDatasetContextCancel: a long run cancelled after its third pair
// stops within the pairs then in progress, with an error wrapping the
// context's, and a done context writes nothing at all.
func TestWriteDatasetContextCancel(t *testing.T) {
	const n, workers, cancelAfter = 10000, 2, 3
	dir := filepath.Join(t.TempDir(), "set")
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	opt := &Options{Width: 32, Height: 16, Samples: 1, Workers: workers, Progress: func(done, _ int) {
		if done == cancelAfter {
			cancel()
		}
	}}
	err := WriteDatasetContext(ctx, dir, Greenhouse, 1, n, opt)
	if !errors.Is(err, context.Canceled) || !strings.Contains(err.Error(), "synth: stopped after") {
		t.Fatalf("cancelled run: %v; want \"synth: stopped after …\" wrapping context.Canceled", err)
	}
	left, err := os.ReadDir(filepath.Join(dir, "left"))
	if err != nil {
		t.Fatal(err)
	}
	// The cancelling pair, at most one more per worker in progress, and at
	// most one per worker handed out as the cancel came.
	if got := len(left); got < cancelAfter || got > cancelAfter+2*workers {
		t.Errorf("%d left views written after cancelling at pair %d with %d workers; want %d to %d", got, cancelAfter, workers, cancelAfter, cancelAfter+2*workers)
	}

	empty := filepath.Join(t.TempDir(), "none")
	if err := WriteDatasetContext(ctx, empty, Greenhouse, 1, n, opt); !errors.Is(err, context.Canceled) {
		t.Errorf("done context: %v; want an error wrapping context.Canceled", err)
	}
	if _, err := os.Stat(empty); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("done context: %s was created (%v)", empty, err)
	}
}
