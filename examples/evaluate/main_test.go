package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
)

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

// directScores computes, for each pair of testdata/evaluation/set, the
// disparity and depth measures from their formulas (EPE, bad-K of
// Scharstein & Szeliski, IJCV 2002; abs rel, sq rel, RMSE, RMSE log, δ, common
// practice) with plain loops over model.Estimator's output for the pair's
// left PNG (decoded with image/png) and the truth PFMs (read with
// depth.LoadPFM), apart from package model/evaluation and its readers. Rows
// are keyed by pair name and hold the pixel count, then the values in the
// order of the CSV columns; the "mean" row averages the pairs with counted
// pixels and holds their total pixel count.
func directScores(t *testing.T, dir string, flip bool) (disp, dep map[string][]float64) {
	t.Helper()
	rig, err := depth.LoadRig(filepath.Join(dir, "rig.json"))
	if err != nil {
		t.Fatal(err)
	}
	est, err := model.NewEstimator(nil, &model.EstimatorOptions{Rig: rig, Flip: flip})
	if err != nil {
		t.Fatal(err)
	}
	disp, dep = map[string][]float64{}, map[string][]float64{}
	var dsum, zsum []float64
	var dn, zn, dpix, zpix int
	for _, name := range []string{"a", "b", "c", "d"} {
		f, err := os.Open(filepath.Join(dir, "left", name+".png"))
		if err != nil {
			t.Fatal(err)
		}
		img, err := png.Decode(f)
		f.Close()
		if err != nil {
			t.Fatal(err)
		}
		e, err := est.Estimate(context.Background(), img)
		if err != nil {
			t.Fatal(err)
		}
		truth := func(kind string) []float32 {
			g, _, _, _, err := depth.LoadPFM(filepath.Join(dir, "truth", kind, name+".pfm"))
			if err != nil {
				t.Fatal(err)
			}
			return g
		}
		ok := func(v float32) bool { return v > 0 && !math.IsInf(float64(v), 0) }

		var n int
		var s, b1, b2, b3 float64
		for i, g := range truth("disp_left") {
			d := e.Disparity.Pix[i]
			if !ok(g) || e.Disparity.Mask[i] == 0 {
				continue
			}
			a := math.Abs(float64(d) - float64(g))
			n, s = n+1, s+a
			b1, b2, b3 = b1+b2f(a > 1), b2+b2f(a > 2), b3+b2f(a > 3)
		}
		disp[name] = scoreRow(n, s, b1, b2, b3)
		if n > 0 {
			dsum, dn, dpix = addRow(dsum, disp[name]), dn+1, dpix+n
		}

		n = 0
		var ar, sr, se, sl, d1, d2, d3 float64
		for i, g := range truth("depth_left") {
			if !ok(g) || e.Depth.Mask[i] == 0 || float64(g) <= rig.MinDepth || float64(g) >= rig.MaxDepth {
				continue
			}
			z, gt := min(max(float64(e.Depth.Pix[i]), rig.MinDepth), rig.MaxDepth), float64(g)
			r := max(z/gt, gt/z)
			n++
			ar, sr, se = ar+math.Abs(z-gt)/gt, sr+(z-gt)*(z-gt)/gt, se+(z-gt)*(z-gt)
			sl += (math.Log(z) - math.Log(gt)) * (math.Log(z) - math.Log(gt))
			d1, d2, d3 = d1+b2f(r < 1.25), d2+b2f(r < 1.25*1.25), d3+b2f(r < 1.25*1.25*1.25)
		}
		dep[name] = scoreRow(n, ar, sr, se, sl, d1, d2, d3)
		if n > 0 {
			dep[name][3], dep[name][4] = math.Sqrt(dep[name][3]), math.Sqrt(dep[name][4]) // RMSE and RMSE log
			zsum, zn, zpix = addRow(zsum, dep[name]), zn+1, zpix+n
		}
	}
	mean := func(sum []float64, pairs, pixels int) []float64 {
		row := []float64{float64(pixels)}
		for _, v := range sum {
			row = append(row, v/float64(pairs))
		}
		return row
	}
	disp["mean"], dep["mean"] = mean(dsum, dn, dpix), mean(zsum, zn, zpix)
	return disp, dep
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// scoreRow returns [n, sums/n...], or [0, NaN...] for n = 0.
func scoreRow(n int, sums ...float64) []float64 {
	row := []float64{float64(n)}
	for _, s := range sums {
		row = append(row, s/float64(n)) // 0/0 = NaN for an empty pair
	}
	return row
}

func addRow(sum, row []float64) []float64 {
	if sum == nil {
		sum = make([]float64, len(row)-1)
	}
	for i, v := range row[1:] {
		sum[i] += v
	}
	return sum
}

// parseTables reads the two CSV tables that -csv prints.
func parseTables(t *testing.T, out string) []map[string][]string {
	t.Helper()
	var tables []map[string][]string
	for _, block := range strings.Split(out, "\n\n")[1:] {
		lines := strings.SplitN(block, "\n", 2)
		if len(lines) < 2 {
			continue
		}
		recs, err := csv.NewReader(strings.NewReader(lines[1])).ReadAll()
		if err != nil {
			t.Fatalf("%v in:\n%s", err, block)
		}
		m := map[string][]string{}
		for _, r := range recs {
			m[r[0]] = r[1:]
		}
		tables = append(tables, m)
	}
	return tables
}

// TestTablesMatchDirectComputation runs the command with -csv -flip on
// testdata/evaluation/set (four 20×10 pairs made by make.py there, pair c
// without any disparity truth, pair d without depth truth inside the rig's
// range) and checks every number of both tables against directScores, to
// 1e-9: the left view at each pair's resolution, flip passed on, the
// columns in their order, the empty pairs shown with 0 pixels and left out
// of the per-pair mean.
func TestTablesMatchDirectComputation(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "evaluation", "set")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	var out, log bytes.Buffer
	if err := run(context.Background(), options{csv: true, flip: true, quiet: true, batch: 1}, ds, &out, &log); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(log.String(), "1 pairs have no pixel with a valid disparity estimate and truth") || !strings.Contains(log.String(), ": c\n") ||
		!strings.Contains(log.String(), "valid depth estimate and truth") || !strings.Contains(log.String(), ": d\n") {
		t.Errorf("stderr does not report the empty pairs:\n%s", log.String())
	}
	tables := parseTables(t, out.String())
	if len(tables) != 2 {
		t.Fatalf("%d tables in:\n%s", len(tables), out.String())
	}
	wantDisp, wantDepth := directScores(t, dir, true)
	for k, c := range []struct {
		got     map[string][]string
		want    map[string][]float64
		columns string
	}{{tables[0], wantDisp, "pixels,epe_px,bad1,bad2,bad3"}, {tables[1], wantDepth, "pixels,abs_rel,sq_rel,rmse,rmse_log,delta_1.25,delta_1.25^2,delta_1.25^3"}} {
		if h := strings.Join(c.got["name"], ","); h != c.columns {
			t.Fatalf("table %d columns %s, want %s", k, h, c.columns)
		}
		for _, name := range []string{"a", "b", "c", "d", "mean"} {
			row := c.got[name]
			want := c.want[name]
			if len(row) != len(want) {
				t.Fatalf("table %d row %s: %v, want %d values", k, name, row, len(want))
			}
			for i, cell := range row {
				v, err := strconv.ParseFloat(cell, 64)
				if err != nil {
					t.Fatalf("table %d row %s: %q", k, name, cell)
				}
				if w := want[i]; !(math.IsNaN(w) && math.IsNaN(v)) && !(math.Abs(v-w) <= 1e-9*math.Max(1, math.Abs(w))) {
					t.Errorf("table %d row %s column %s: %v, direct computation %v", k, name, strings.Split(c.columns, ",")[i], v, w)
				}
			}
		}
	}
	if wantDisp["c"][0] != 0 || wantDepth["d"][0] != 0 || wantDisp["a"][0] == 0 || wantDepth["a"][0] == 0 {
		t.Errorf("fixture: pair c has %v disparity pixels, d %v depth pixels", wantDisp["c"][0], wantDepth["d"][0])
	}
}
