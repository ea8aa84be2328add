package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/model"
)

// TestRunSynthetic evaluates the committed synthetic greenhouse pairs, with
// one adaptation step, and checks the output's structure and files: titles
// naming the weights, one before/after table with the change, error maps
// before and after.
func TestRunSynthetic(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	errs := t.TempDir()
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-errors", errs, "-adapt", "1", "-adapt-batch", "2", "-quiet", dir}, &out, &log); err != nil {
		t.Fatal(err)
	}
	def, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	s := out.String()
	for _, want := range []string{"before adaptation: weights embedded (" + def.Provenance[model.ProvenanceStatus] + ")", "after adaptation: weights embedded (train.batch=2",
		"EPE px, holes as 0", "bad-3 %, holes filled along the scan line", "abs rel", "δ<1.25 %", "adaptation: 1 steps", "change", "points"} {
		if !strings.Contains(s, want) {
			t.Errorf("output lacks %q:\n%s", want, s)
		}
	}
	if strings.Count(s, "measure") != 1 {
		t.Errorf("want one before/after table:\n%s", s)
	}
	for _, p := range []string{"000000.disp-error.png", "000001.depth-error.png", filepath.Join("adapted", "000002.disp-error.png")} {
		if img := testutil.PNG(t, filepath.Join(errs, p)); img.Bounds().Dx() != 256 {
			t.Errorf("%s: width %d, want 256", p, img.Bounds().Dx())
		}
	}
	for _, args := range [][]string{{"-quiet", t.TempDir()}, {"a", "b"}, {"-pair", "a,b"}, {"-rig", "r.json"}, {"-adapt", "-1"}, {"-method", "sgm", "-adapt", "2"}, {"-method", "other"}, {"-bad-flag"}} {
		if err := run(context.Background(), args, &out, &log); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") {
			t.Errorf("%q: %v", args, err)
		}
	}
	if err := run(context.Background(), []string{"-help"}, &out, &log); err != nil || !strings.Contains(log.String(), "usage: evaluate") {
		t.Errorf("-help: %v", err)
	}
}

// TestPairSet evaluates the committed Motorcycle pair (Middlebury 2014,
// shipped by Debian python3-skimage 0.19.3; see testdata/motorcycle) with
// its rescaled rig, and refuses a rig of another aspect ratio naming it.
func TestPairSet(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	pair := filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + filepath.Join(m, "disp_left.pfm")
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-quiet", "-pair", pair, "-rig", filepath.Join("..", "..", "testdata", "depth", "motorcycle_rig.json")}, &out, &log); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "EPE px") || !strings.Contains(out.String(), "left ") {
		t.Errorf("output:\n%s", out.String())
	}
	// The greenhouse rig (256×128) is for another aspect ratio than 370×250.
	other := filepath.Join("..", "..", "testdata", "synth", "greenhouse", "rig.json")
	if err := run(context.Background(), []string{"-quiet", "-pair", pair, "-rig", other}, &out, &log); err == nil || !strings.HasPrefix(err.Error(), "evaluate: ") || !strings.Contains(err.Error(), "aspect ratio") || !strings.Contains(err.Error(), other) {
		t.Errorf("rig of another aspect ratio: %v", err)
	}
}

// TestSGMBothWays scores the semi-global matcher on the Motorcycle pair:
// the title says which method, each hole rule has a table, the filled
// score is the better of the two over every pixel (sgm leaves holes at
// occlusions), and the valid pixels alone, with their coverage, score best.
func TestSGMBothWays(t *testing.T) {
	m := filepath.Join("..", "..", "testdata", "motorcycle")
	pair := filepath.Join(m, "left.png") + "," + filepath.Join(m, "right.png") + "," + filepath.Join(m, "disp_left.pfm")
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-quiet", "-method", "sgm", "-csv", "-pair", pair}, &out, &log); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&out).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	epe, pixels := map[string]float64{}, map[string]int{}
	for _, r := range recs[1:] {
		if r[0] != "sgm" {
			t.Fatalf("phase %q", r[0])
		}
		if r[2] == "left" {
			epe[r[1]], _ = strconv.ParseFloat(r[4], 64)
			pixels[r[1]], _ = strconv.Atoi(r[3])
		}
	}
	const zero, filled, valid = "holes as 0", "holes filled along the scan line", "valid pixels only (holes excluded)"
	// The matcher's own checks leave out its worst pixels: the valid ones
	// score best, on fewer pixels than have truth.
	if len(recs) != 1+2*3 || !(epe[filled] > 0) || !(epe[filled] < epe[zero]) || !(epe[valid] < epe[filled]) ||
		!(pixels[valid] > 0 && pixels[valid] < pixels[zero]) || pixels[filled] != pixels[zero] {
		t.Errorf("records %q", recs)
	}
	out.Reset()
	if err := run(context.Background(), []string{"-quiet", "-method", "sgm", "-pair", pair}, &out, &log); err != nil {
		t.Fatal(err)
	}
	if s := out.String(); !strings.Contains(s, "sgm: semi-global matching") || !strings.Contains(s, "disparity, holes as 0") || !strings.Contains(s, "disparity, holes filled") ||
		!strings.Contains(s, fmt.Sprintf("coverage: %d of the %d pixels with truth", pixels[valid], pixels[zero])) {
		t.Errorf("text:\n%s", s)
	}
}

// TestOutputToFiles runs with stdout and stderr redirected to files, as
// "evaluate ... > log.txt 2> err.txt" does: neither holds a carriage
// return, and the progress is there as plain lines.
func TestOutputToFiles(t *testing.T) {
	dir := t.TempDir()
	stdout, err := os.Create(filepath.Join(dir, "log.txt"))
	if err != nil {
		t.Fatal(err)
	}
	stderr, err := os.Create(filepath.Join(dir, "err.txt"))
	if err != nil {
		t.Fatal(err)
	}
	err = run(context.Background(), []string{"-adapt", "2", "-adapt-batch", "1", filepath.Join("..", "..", "testdata", "synth", "greenhouse")}, stdout, stderr)
	stdout.Close()
	stderr.Close()
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"log.txt", "err.txt"} {
		b, err := os.ReadFile(filepath.Join(dir, f))
		if err != nil || bytes.ContainsAny(b, "\r\x1b") {
			t.Errorf("%s: %v, holds a carriage return or escape:\n%q", f, err, b)
		}
	}
	b, _ := os.ReadFile(filepath.Join(dir, "err.txt"))
	if !bytes.Contains(b, []byte("adapting: 2/2 steps 100%")) || !bytes.Contains(b, []byte("after adaptation: 3/3 pairs 100%")) {
		t.Errorf("progress lines:\n%s", b)
	}
}

// TestCSVAdapt: with -adapt, -csv prints one CSV table that encoding/csv
// reads: one header, the same fields in every row, a phase column with
// before and after, the three hole rules, no prose.
func TestCSVAdapt(t *testing.T) {
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-quiet", "-csv", "-adapt", "1", "-adapt-batch", "1", filepath.Join("..", "..", "testdata", "synth", "greenhouse")}, &out, &log); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(bytes.NewReader(out.Bytes())).ReadAll() // a ragged row is an error
	if err != nil {
		t.Fatalf("%v in:\n%s", err, out.String())
	}
	seen := map[string]int{}
	for _, r := range recs[1:] {
		seen[r[0]+"/"+r[1]]++
	}
	if recs[0][0] != "phase" || len(recs) != 1+4*6 || seen["before adaptation/holes as 0"] != 4 || seen["after adaptation/holes filled along the scan line"] != 4 {
		t.Errorf("header %v, %d records, phases %v", recs[0], len(recs), seen)
	}
}

// directScores computes, for each pair of testdata/evaluation/set, the
// disparity and depth measures from their formulas (EPE, bad-K of
// Scharstein & Szeliski, IJCV 2002; abs rel, sq rel, RMSE, RMSE log, δ, common
// practice) with plain loops over model.Estimator's output for the pair's
// left PNG (decoded with image/png) and the truth PFMs (read with
// depth.LoadPFM), apart from package model/evaluation and its readers. Rows
// are keyed by pair name and hold the pixel count, then the values in the
// order of the CSV columns; disparity holes count as disparity 0 (the
// "holes as 0" rows); the "mean" row averages the pairs with counted pixels
// and holds their total pixel count.
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
		img := testutil.PNG(t, filepath.Join(dir, "left", name+".png"))
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
			if e.Disparity.Mask[i] == 0 {
				d = 0 // a hole counts as disparity 0
			}
			if !ok(g) {
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

// TestTablesMatchDirectComputation runs the command with -csv -flip on
// testdata/evaluation/set (four 20×10 pairs made by make.py there, pair c
// without any disparity truth, pair d without depth truth inside the rig's
// range) and checks every number of the holes-as-0 rows against
// directScores, to 1e-9 (rates × 100): the left view at each pair's
// resolution, flip passed on, the columns in their order, the empty pairs
// shown with 0 pixels and left out of the per-pair mean.
func TestTablesMatchDirectComputation(t *testing.T) {
	dir := filepath.Join("..", "..", "testdata", "evaluation", "set")
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-csv", "-flip", "-quiet", dir}, &out, &log); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(log.String(), "1 pairs have no pixel with a valid disparity estimate and truth") || !strings.Contains(log.String(), ": c\n") ||
		!strings.Contains(log.String(), "valid depth estimate and truth") || !strings.Contains(log.String(), ": d\n") {
		t.Errorf("stderr does not report the empty pairs:\n%s", log.String())
	}
	recs, err := csv.NewReader(&out).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	const columns = "phase,holes,pair,disparity_pixels,epe_px,bad1_pct,bad2_pct,bad3_pct,depth_pixels,abs_rel,sq_rel_m,rmse_m,rmse_log,delta1_pct,delta2_pct,delta3_pct"
	if h := strings.Join(recs[0], ","); h != columns {
		t.Fatalf("columns %s, want %s", h, columns)
	}
	wantDisp, wantDepth := directScores(t, dir, true)
	pct := []bool{false, false, true, true, true, false, false, false, false, false, true, true, true}
	rows := 0
	for _, r := range recs[1:] {
		if r[1] != "holes as 0" {
			continue
		}
		rows++
		want := append(append([]float64{}, wantDisp[r[2]]...), wantDepth[r[2]]...)
		if len(want) != len(r)-3 {
			t.Fatalf("row %s: %v, want %d values", r[2], r, len(want))
		}
		for i, cell := range r[3:] {
			v, err := strconv.ParseFloat(cell, 64)
			if err != nil {
				t.Fatalf("row %s: %q", r[2], cell)
			}
			w := want[i]
			if pct[i] {
				w *= 100
			}
			if !(math.IsNaN(w) && math.IsNaN(v)) && !(math.Abs(v-w) <= 1e-9*math.Max(1, math.Abs(w))) {
				t.Errorf("row %s column %s: %v, direct computation %v", r[2], recs[0][3+i], v, w)
			}
		}
	}
	if rows != 5 || wantDisp["c"][0] != 0 || wantDepth["d"][0] != 0 || wantDisp["a"][0] == 0 || wantDepth["a"][0] == 0 {
		t.Errorf("%d rows; fixture: pair c has %v disparity pixels, d %v depth pixels", rows, wantDisp["c"][0], wantDepth["d"][0])
	}
}
