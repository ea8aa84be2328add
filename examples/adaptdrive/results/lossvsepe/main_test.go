package main

import (
	"bytes"
	"context"
	"errors"
	"math"
	"strconv"
	"strings"
	"testing"
)

// TestRun plays a short drive and checks the table: a row per block
// (broken at the leg boundary), the objective scored and equal for both
// weights while nothing has been swapped in, NaN for a block without a
// scored frame, and the same output twice (steps in the frame loop, fixed
// seed). Bad flags are errors.
func TestRun(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and adapts for a while")
	}
	args := []string{"-legs", "greenhouse:3,storage:5", "-width", "128", "-height", "96", "-block", "4", "-steps-per-frame", "1", "-loss-every", "2"}
	var out1, out2, errs bytes.Buffer
	if err := run(context.Background(), args, &out1, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	t.Logf("\n%s", out1.String())
	if err := run(context.Background(), args, &out2, &errs); err != nil {
		t.Fatal(err)
	}
	if out1.String() != out2.String() {
		t.Errorf("two runs differ:\n%s\n%s", out1.String(), out2.String())
	}
	lines := strings.Split(strings.TrimSpace(out1.String()), "\n")
	header := strings.Fields(lines[0])
	// Frames 0-2 greenhouse, 3-6 and 7 storage; frames 0, 2, 4 and 6 scored.
	want := []struct {
		frames, style string
		scored        bool
	}{{"0-2", "greenhouse", true}, {"3-6", "storage", true}, {"7-7", "storage", false}}
	if len(lines) != 1+len(want) {
		t.Fatalf("want a header and %d rows, got:\n%s", len(want), out1.String())
	}
	for i, w := range want {
		f := strings.Fields(lines[1+i])
		if len(f) != len(header) || f[0] != w.frames || f[1] != w.style {
			t.Errorf("row %d: want %d fields starting %s %s, got %q", i, len(header), w.frames, w.style, lines[1+i])
			continue
		}
		fixed, err1 := strconv.ParseFloat(f[4], 64)
		adapted, err2 := strconv.ParseFloat(f[5], 64)
		swaps, err3 := strconv.Atoi(f[6])
		if err := errors.Join(err1, err2, err3); err != nil {
			t.Errorf("row %d: %v", i, err)
			continue
		}
		switch {
		case !w.scored:
			if !math.IsNaN(fixed) || !math.IsNaN(adapted) {
				t.Errorf("row %d: no frame scored, want NaN losses, got %v %v", i, fixed, adapted)
			}
		case !(fixed > 0) || math.IsInf(fixed, 0) || !(adapted > 0) || math.IsInf(adapted, 0):
			t.Errorf("row %d: losses %v %v, want positive and finite", i, fixed, adapted)
		case i == 0 && (swaps != 0 || fixed != adapted):
			// The adapter needs more than its 4 held-out frames before its
			// first step, so the first block runs the starting weights.
			t.Errorf("row 0: %d swaps, losses %v and %v: want the same weights scored", swaps, fixed, adapted)
		}
	}
	for _, bad := range [][]string{{"-legs", "nowhere:3"}, {"-steps-per-frame", "0"}, {"-loss-every", "0"}, {"-block", "0"}, {"extra"}} {
		if err := run(context.Background(), bad, &out1, &errs); err == nil || !strings.HasPrefix(err.Error(), "lossvsepe: ") {
			t.Errorf("%q: want an error starting lossvsepe:, got %v", bad, err)
		}
	}
}
