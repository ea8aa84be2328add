package main

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestWithMean(t *testing.T) {
	rows := withMean([]row{{"a", 10, []float64{1, 0.5}}, {"b", 30, []float64{3, 0.1}}})
	m := rows[2]
	// Per-pair average (common practice in depth benchmarks), total pixels.
	if m.name != "mean" || m.n != 40 || m.v[0] != 2 || m.v[1] != 0.3 {
		t.Errorf("mean row %+v", m)
	}
}

// TestRunSynthetic evaluates the committed synthetic greenhouse pairs, with
// one adaptation step, and checks the output's structure and files.
func TestRunSynthetic(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	errs := t.TempDir()
	var out, log bytes.Buffer
	o := options{errors: errs, adapt: 1, batch: 2, seed: 1, quiet: true}
	if err := run(context.Background(), o, dir, &out, &log); err != nil {
		t.Fatal(err)
	}
	s := out.String()
	for _, want := range []string{"before adaptation", "after adaptation", "epe_px", "abs_rel", "000002", "mean", "adaptation: 1 steps"} {
		if !strings.Contains(s, want) {
			t.Errorf("output lacks %q:\n%s", want, s)
		}
	}
	for _, p := range []string{"000000.disp-error.png", "000001.depth-error.png", filepath.Join("adapted", "000002.disp-error.png")} {
		f, err := os.Open(filepath.Join(errs, p))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil || img.Bounds().Dx() != 256 {
			t.Errorf("%s: %v", p, err)
		}
	}
	if err := run(context.Background(), options{batch: 1}, t.TempDir(), &out, &log); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
		t.Errorf("empty folder: %v", err)
	}
}

// TestPairFolder lays out the committed Motorcycle pair (Middlebury 2014,
// shipped by Debian python3-skimage 0.19.3; see testdata/motorcycle) as a
// dataset and checks that model/data reads it with the rescaled rig.
func TestPairFolder(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	dir := t.TempDir()
	pair := filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + filepath.Join(m, "disp_left.pfm")
	if _, err := pairFolder(dir, pair, filepath.Join("..", "..", "testdata", "depth", "motorcycle_rig.json")); err != nil {
		t.Fatal(err)
	}
	var out, log bytes.Buffer
	if err := run(context.Background(), options{quiet: true, batch: 1}, dir, &out, &log); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "epe_px") || !strings.Contains(out.String(), "left ") {
		t.Errorf("output:\n%s", out.String())
	}
	if _, err := pairFolder(t.TempDir(), "a,b", ""); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
		t.Errorf("two files: %v", err)
	}
	// The greenhouse rig (256×128) is for another aspect ratio than 370×250.
	other := filepath.Join("..", "..", "testdata", "synth", "greenhouse", "rig.json")
	if _, err := pairFolder(t.TempDir(), pair, other); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), "aspect ratio") || !strings.Contains(err.Error(), other) {
		t.Errorf("rig of another aspect ratio: %v", err)
	}
}

// TestPairErrorsNameUserFiles checks that an error about a -pair file names
// the file the user gave, not its copy in the staging folder.
func TestPairErrorsNameUserFiles(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	small := filepath.Join("..", "..", "model", "demo", "greenhouse_left.png") // 256×128, the pair is 370×250
	notPFM := filepath.Join(m, "left.png")
	for _, tc := range []struct{ pair, want string }{
		{filepath.Join(m, "left.png") + "," + small + "," + filepath.Join(m, "disp_left.pfm"), small},
		{filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + notPFM, notPFM},
	} {
		err := main1(context.Background(), options{quiet: true, batch: 1, pair: tc.pair}, "", false)
		if err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), tc.want) || strings.Contains(err.Error(), "parallax-evaluate-") {
			t.Errorf("-pair %s: %v, want an error naming %s", tc.pair, err, tc.want)
		} else {
			t.Logf("%v", err)
		}
	}
}
