package main

import (
	"bytes"
	"context"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
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
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	if err := run(context.Background(), o, ds, &out, &log); err != nil {
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
	if err := main1(context.Background(), options{batch: 1}, t.TempDir(), true); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
		t.Errorf("empty folder: %v", err)
	}
}

// TestPairSet makes a set of the committed Motorcycle pair (Middlebury 2014,
// shipped by Debian python3-skimage 0.19.3; see testdata/motorcycle) with
// the rescaled rig and evaluates it.
func TestPairSet(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	pair := filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + filepath.Join(m, "disp_left.pfm")
	ds, err := pairSet(pair, filepath.Join("..", "..", "testdata", "depth", "motorcycle_rig.json"))
	if err != nil {
		t.Fatal(err)
	}
	if ds.Rig == nil || ds.Rig.Width != 370 || ds.Rig.Height != 250 {
		t.Fatalf("rig %+v, want one for 370×250", ds.Rig)
	}
	var out, log bytes.Buffer
	if err := run(context.Background(), options{quiet: true, batch: 1}, ds, &out, &log); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "epe_px") || !strings.Contains(out.String(), "left ") {
		t.Errorf("output:\n%s", out.String())
	}
	if _, err := pairSet("a,b", ""); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
		t.Errorf("two files: %v", err)
	}
	// The greenhouse rig (256×128) is for another aspect ratio than 370×250.
	other := filepath.Join("..", "..", "testdata", "synth", "greenhouse", "rig.json")
	if _, err := pairSet(pair, other); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), "aspect ratio") || !strings.Contains(err.Error(), other) {
		t.Errorf("rig of another aspect ratio: %v", err)
	}
}

// TestPairErrorsNameUserFiles checks that an error about a -pair file names
// the file the user gave.
func TestPairErrorsNameUserFiles(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	small := filepath.Join("..", "..", "model", "demo", "greenhouse_left.png") // 256×128, the pair is 370×250
	notPFM := filepath.Join(m, "left.png")
	for _, tc := range []struct{ pair, want string }{
		{filepath.Join(m, "left.png") + "," + small + "," + filepath.Join(m, "disp_left.pfm"), small},
		{filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + notPFM, notPFM},
	} {
		err := main1(context.Background(), options{quiet: true, batch: 1, pair: tc.pair}, "", false)
		if err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("-pair %s: %v, want an error naming %s", tc.pair, err, tc.want)
		} else {
			t.Logf("%v", err)
		}
	}
}
