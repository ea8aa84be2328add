package synth

import (
	"context"
	"errors"
	"fmt"
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
	runErr := WriteDatasetContext(ctx, dir, Greenhouse, 1, n, opt)
	if !errors.Is(runErr, context.Canceled) || !strings.Contains(runErr.Error(), "synth: stopped after") {
		t.Fatalf("cancelled run: %v; want \"synth: stopped after …\" wrapping context.Canceled", runErr)
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
	// The error counts every pair written, those that were in progress too.
	if want := fmt.Sprintf("stopped after %d of %d pairs", len(left), n); !strings.Contains(runErr.Error(), want) {
		t.Errorf("cancelled run: %q does not say %q", runErr, want)
	}

	// Cancelled as the last pair is counted: the run is complete, no error.
	ctx2, cancel2 := context.WithCancel(context.Background())
	defer cancel2()
	last := &Options{Width: 32, Height: 16, Samples: 1, Workers: workers, Progress: func(done, total int) {
		if done == total {
			cancel2()
		}
	}}
	if err := WriteDatasetContext(ctx2, filepath.Join(t.TempDir(), "all"), Greenhouse, 1, 5, last); err != nil {
		t.Errorf("run cancelled after its last pair: %v, want nil", err)
	}

	empty := filepath.Join(t.TempDir(), "none")
	if err := WriteDatasetContext(ctx, empty, Greenhouse, 1, n, opt); !errors.Is(err, context.Canceled) {
		t.Errorf("done context: %v; want an error wrapping context.Canceled", err)
	}
	if _, err := os.Stat(empty); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("done context: %s was created (%v)", empty, err)
	}
}
