package main

import (
	"bytes"
	"context"
	"strings"
	"testing"
)

// TestRun plays a short greenhouse-into-storage drive in the reproducible
// mode and checks the table: one row per block, both styles named, and the
// same output twice (fixed seed, steps in the frame loop).
func TestRun(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and adapts for a while")
	}
	args := []string{"-legs", "greenhouse:6,storage:6", "-width", "128", "-height", "96", "-block", "4", "-steps-per-frame", "1"}
	var out1, out2, errs bytes.Buffer
	if err := run(context.Background(), args, &out1, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	if err := run(context.Background(), args, &out2, &errs); err != nil {
		t.Fatal(err)
	}
	t.Logf("\n%s", out1.String())
	lines := strings.Split(strings.TrimSpace(out1.String()), "\n")
	if len(lines) != 4 || !strings.Contains(out1.String(), "greenhouse") || !strings.Contains(out1.String(), "storage") {
		t.Errorf("want a header and 3 rows naming both styles, got:\n%s", out1.String())
	}
	if out1.String() != out2.String() {
		t.Errorf("two runs differ:\n%s\n%s", out1.String(), out2.String())
	}
	if err := run(context.Background(), []string{"-legs", "nowhere:3"}, &out1, &errs); err == nil {
		t.Error("an unknown style was accepted")
	}
}
