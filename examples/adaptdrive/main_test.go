package main

import (
	"bytes"
	"context"
	"fmt"
	imagepng "image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/safetensors"
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
	if len(lines) != 6 || !strings.Contains(out1.String(), "greenhouse") || !strings.Contains(out1.String(), "storage") {
		t.Errorf("want a header, 4 rows (blocks of 4 broken at the leg boundary) naming both styles and the adapter's summary, got:\n%s", out1.String())
	}
	if out1.String() != out2.String() {
		t.Errorf("two runs differ:\n%s\n%s", out1.String(), out2.String())
	}
	if err := run(context.Background(), []string{"-legs", "nowhere:3"}, &out1, &errs); err == nil {
		t.Error("an unknown style was accepted")
	}
}

// TestModes: -plot writes a PNG of the chart's size, fractional
// -steps-per-frame steps every other frame, -write writes the drive's
// frames, -offline adds a column, and -latency prints both phases and the
// ratio (figures of a loaded test machine mean nothing; only the output's
// form is checked). Bad flags are errors.
func TestModes(t *testing.T) {
	if testing.Short() {
		t.Skip("renders and adapts for a while")
	}
	dir := t.TempDir()
	small := []string{"-legs", "greenhouse:3,storage:7", "-width", "128", "-height", "96"}
	var out, errs bytes.Buffer
	png := filepath.Join(dir, "drive.png")
	if err := run(context.Background(), append(small, "-block", "5", "-steps-per-frame", "0.5", "-plot", png), &out, &errs); err != nil {
		t.Fatalf("%v\n%s", err, errs.String())
	}
	f, err := os.Open(png)
	if err != nil {
		t.Fatal(err)
	}
	cfg, err := imagepng.DecodeConfig(f)
	f.Close()
	if err != nil || cfg.Width != 800 || cfg.Height != 450 {
		t.Errorf("plot: %v, %dx%d", err, cfg.Width, cfg.Height)
	}
	// Rows break at the leg boundary: 0-2 greenhouse, 3-7 and 8-9 storage.
	if !strings.Contains(out.String(), "0-2 ") || !strings.Contains(out.String(), "3-7 ") || !strings.Contains(out.String(), "8-9 ") {
		t.Errorf("rows:\n%s", out.String())
	}
	// 10 frames at 0.5 steps per frame owe 5 steps; the first ones find
	// too few frames (4 are held out), so at most 5 are taken.
	if !strings.Contains(out.String(), "adapter: ") {
		t.Errorf("no adapter summary:\n%s", out.String())
	}
	drive := filepath.Join(dir, "drive")
	out.Reset()
	if err := run(context.Background(), append(small, "-write", drive), &out, &errs); err != nil {
		t.Fatal(err)
	}
	if names, _ := filepath.Glob(filepath.Join(drive, "left", "*.png")); len(names) != 10 {
		t.Errorf("-write: %d left views, want 10", len(names))
	}
	// -eval scores the written frames with the same EPE as the drive's
	// fixed column (the same images, 8-bit either way, the same truth).
	var evalOut, fixedOut bytes.Buffer
	if err := run(context.Background(), append(small, "-eval", drive, "-block", "10"), &evalOut, &errs); err != nil {
		t.Fatal(err)
	}
	if err := run(context.Background(), append(small, "-block", "10", "-steps-per-frame", "0.01"), &fixedOut, &errs); err != nil {
		t.Fatal(err)
	}
	var mean float64
	lines := strings.Split(evalOut.String(), "\n")
	if _, err := fmt.Sscanf(lines[len(lines)-2], "10 frames: mean EPE %f px", &mean); err != nil {
		t.Fatalf("-eval output %q: %v", evalOut.String(), err)
	}
	var g, st float64 // the fixed column: rows 0-2 greenhouse and 3-9 storage, 3 decimals
	rows := strings.Split(fixedOut.String(), "\n")
	_, err1 := fmt.Sscanf(strings.Join(strings.Fields(rows[1])[:3], " "), "0-2 greenhouse %f", &g)
	_, err2 := fmt.Sscanf(strings.Join(strings.Fields(rows[2])[:3], " "), "3-9 storage %f", &st)
	if err1 != nil || err2 != nil {
		t.Fatalf("drive output %q: %v %v", fixedOut.String(), err1, err2)
	}
	if want := (3*g + 7*st) / 10; math.Abs(mean-want) > 1e-3 {
		t.Errorf("-eval mean EPE %.4f, the drive's fixed column gives %.4f", mean, want)
	}
	w, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	wpath := filepath.Join(dir, "w.safetensors")
	if err := w.Save(wpath, safetensors.F16); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := run(context.Background(), append(small, "-block", "10", "-steps-per-frame", "0.1", "-offline", wpath), &out, &errs); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "EPE offline") {
		t.Errorf("-offline: no column:\n%s", out.String())
	}
	out.Reset()
	if err := run(context.Background(), append(small, "-latency", "5"), &out, &errs); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "without adaptation: median") || !strings.Contains(out.String(), "ratio of medians") {
		t.Errorf("-latency:\n%s", out.String())
	}
	for _, bad := range [][]string{{"-steps-per-frame", "-1"}, {"-memory-limit", "-1"}, {"-latency", "-2"}, {"-block", "0"}, {"-offline", filepath.Join(dir, "none")}} {
		if err := run(context.Background(), append(small, bad...), &out, &errs); err == nil {
			t.Errorf("%v accepted", bad)
		}
	}
}
