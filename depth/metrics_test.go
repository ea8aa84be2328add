package depth

import (
	"encoding/csv"
	"encoding/json"
	"errors"
	"image"
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// depthRow builds a 1-row depth map; a value of 0 is an invalid pixel.
func depthRow(vals ...float32) *Depth {
	d, err := NewDepth(image.Rect(0, 0, len(vals), 1))
	if err != nil {
		panic(err)
	}
	for x, v := range vals {
		d.Set(x, 0, v)
	}
	return d
}

func dispRow(vals ...float32) *Disparity {
	d, err := NewDisparity(image.Rect(0, 0, len(vals), 1))
	if err != nil {
		panic(err)
	}
	for x, v := range vals {
		d.Set(x, 0, v)
	}
	return d
}

func near(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol {
		t.Errorf("%s = %.15g, want %.15g (tolerance %g)", name, got, want, tol)
	}
}

// TestDepthErrorsHand checks the formulas of DepthMetrics on cases worked
// out by hand.
func TestDepthErrorsHand(t *testing.T) {
	// Counted pixels (ẑ, z): (1, 1), (2.5, 2), (2, 4); the fourth has no
	// estimate and the fifth no ground truth. Ratios 1, 1.25, 2.
	est := depthRow(1, 2.5, 2, 0, 3)
	gt := depthRow(1, 2, 4, 5, 0)
	m, err := DepthErrors(est, gt, nil)
	if err != nil {
		t.Fatal(err)
	}
	if m.N != 3 || m.Scale != 1 {
		t.Errorf("N = %d, Scale = %v; want 3, 1", m.N, m.Scale)
	}
	const tol = 1e-15
	near(t, "AbsRel", m.AbsRel, (0+0.5/2+2.0/4)/3, tol)   // 0.25
	near(t, "SqRel", m.SqRel, (0+0.25/2+4.0/4)/3, tol)    // 0.375
	near(t, "RMSE", m.RMSE, math.Sqrt((0+0.25+4)/3), tol) // 1.1902
	near(t, "RMSELog", m.RMSELog, math.Sqrt((math.Pow(math.Log(1.25), 2)+math.Pow(math.Log(2), 2))/3), tol)
	// δ thresholds are strict: a ratio of exactly 1.25 fails δ < 1.25.
	near(t, "Delta1", m.Delta1, 1.0/3, tol)
	near(t, "Delta2", m.Delta2, 2.0/3, tol)
	near(t, "Delta3", m.Delta3, 2.0/3, tol) // 2 > 1.25³ = 1.953125
	// The same at the other thresholds: ratios of exactly 1.25² = 1.5625 and
	// 1.25³ = 1.953125 (both exact in binary) fail δ2 and δ3.
	m, err = DepthErrors(depthRow(1.5625, 1.953125), depthRow(1, 1), nil)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "Delta2 at 1.25²", m.Delta2, 0, tol)
	near(t, "Delta3 at 1.25³", m.Delta3, 0.5, tol)

	// Median scaling, odd count: an estimate at twice the scale becomes exact.
	m, err = DepthErrors(depthRow(2, 4, 8), depthRow(1, 2, 4), &DepthOptions{MedianScale: true})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "median Scale", m.Scale, 0.5, tol)
	near(t, "median AbsRel", m.AbsRel, 0, tol)
	near(t, "median Delta1", m.Delta1, 1, tol)

	// Even count, in an order where sorting would break the pairing:
	// median(z) = (2+3)/2, median(ẑ) = (2+6)/2, scale 0.625; scaled
	// ẑ = 1.25, 1.25, 3.75, 5 against z = 4, 1, 3, 2.
	m, err = DepthErrors(depthRow(2, 2, 6, 8), depthRow(4, 1, 3, 2), &DepthOptions{MedianScale: true})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "even Scale", m.Scale, 0.625, tol)
	near(t, "even AbsRel", m.AbsRel, (2.75/4+0.25/1+0.75/3+3.0/2)/4, tol) // 0.671875

	// Cap: ground truth at or above MaxDepth does not count; estimates above
	// it are lowered to it (30 → 8, error 4 on z = 4).
	m, err = DepthErrors(depthRow(1, 2, 30, 20), depthRow(1, 2, 4, 9), &DepthOptions{MaxDepth: 8})
	if err != nil {
		t.Fatal(err)
	}
	if m.N != 3 {
		t.Errorf("capped N = %d, want 3", m.N)
	}
	near(t, "capped AbsRel", m.AbsRel, (4.0/4)/3, tol)

	// Lower limit: z = 0.5 ≤ MinDepth does not count; ẑ = 0.5 rises to 1.
	m, err = DepthErrors(depthRow(0.1, 0.5, 4), depthRow(0.5, 2, 4), &DepthOptions{MinDepth: 1})
	if err != nil {
		t.Fatal(err)
	}
	if m.N != 2 {
		t.Errorf("MinDepth N = %d, want 2", m.N)
	}
	near(t, "MinDepth AbsRel", m.AbsRel, (1.0/2)/2, tol)
}

func TestDepthErrorsInputs(t *testing.T) {
	_, err := DepthErrors(depthRow(0, 1), depthRow(1, 0), nil)
	if !errors.Is(err, ErrNoValidPixels) {
		t.Errorf("disjoint masks: %v, want ErrNoValidPixels", err)
	}
	if _, err := DepthErrors(depthRow(1, 2), depthRow(1, 2, 3), nil); err == nil || !strings.HasPrefix(err.Error(), "depth: ") {
		t.Errorf("different bounds: %v", err)
	}
	if _, err := DepthErrors(depthRow(1), depthRow(1), &DepthOptions{MinDepth: 5, MaxDepth: 2}); err == nil {
		t.Error("MinDepth > MaxDepth: no error")
	}
	bad := depthRow(1, 2)
	bad.Pix[0] = float32(math.NaN()) // valid in the mask but NaN: a corrupt map
	if _, err := DepthErrors(bad, depthRow(1, 2), nil); err == nil {
		t.Error("NaN under a valid mask: no error")
	}
	short := depthRow(1, 2)
	short.Mask = short.Mask[:1]
	if _, err := DepthErrors(short, depthRow(1, 2), nil); err == nil {
		t.Error("short mask: no error")
	}
}

// TestDisparityErrorsHand: errors 0.5, 1.5, 2.5, 3.5, 0 and exactly 1 px;
// bad-K counts errors strictly above K pixels.
func TestDisparityErrorsHand(t *testing.T) {
	est := dispRow(10.5, 11.5, 12.5, 13.5, 10, 11, 7)
	gt := dispRow(10, 10, 10, 10, 10, 10, 0)
	m, err := DisparityErrors(est, gt)
	if err != nil {
		t.Fatal(err)
	}
	if m.N != 6 {
		t.Errorf("N = %d, want 6", m.N)
	}
	near(t, "EPE", m.EPE, 9.0/6, 1e-15)
	near(t, "Bad1", m.Bad1, 3.0/6, 1e-15)
	near(t, "Bad2", m.Bad2, 2.0/6, 1e-15)
	near(t, "Bad3", m.Bad3, 1.0/6, 1e-15)
	if _, err := DisparityErrors(dispRow(1), dispRow(0)); !errors.Is(err, ErrNoValidPixels) {
		t.Errorf("no common pixel: %v", err)
	}
}

type metricsFixture struct {
	Width, Height int
	GT, Est       []float32
	GTValid       []int `json:"gt_valid"`
	EstValid      []int `json:"est_valid"`
	Depth         map[string]map[string]float64
	DispGT        []float32 `json:"disp_gt"`
	DispEst       []float32 `json:"disp_est"`
	Disparity     map[string]float64
	Source        string
}

// TestMetricsNumpy compares both metric families with numpy 1.24.2 on a
// seeded random case (testdata/depth/metrics.json, made by make.py, which
// writes the formulas again in numpy).
func TestMetricsNumpy(t *testing.T) {
	data, err := os.ReadFile("../testdata/depth/metrics.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx metricsFixture
	if err := json.Unmarshal(data, &fx); err != nil {
		t.Fatal(err)
	}
	r := image.Rect(0, 0, fx.Width, fx.Height)
	est, _ := NewDepth(r)
	gt, _ := NewDepth(r)
	dest, _ := NewDisparity(r)
	dgt, _ := NewDisparity(r)
	for i := range fx.GT {
		x, y := i%fx.Width, i/fx.Width
		if fx.GTValid[i] != 0 {
			gt.Set(x, y, fx.GT[i])
			dgt.Set(x, y, fx.DispGT[i])
		}
		if fx.EstValid[i] != 0 {
			est.Set(x, y, fx.Est[i])
			dest.Set(x, y, fx.DispEst[i])
		}
	}
	opts := map[string]*DepthOptions{
		"plain":         nil,
		"median":        {MedianScale: true},
		"median_capped": {MedianScale: true, MinDepth: 1, MaxDepth: 8},
		"capped":        {MinDepth: 1, MaxDepth: 8},
	}
	for name, opt := range opts {
		want := fx.Depth[name]
		m, err := DepthErrors(est, gt, opt)
		if err != nil {
			t.Fatal(err)
		}
		if float64(m.N) != want["n"] {
			t.Errorf("%s: N = %d, numpy %v", name, m.N, want["n"])
		}
		// Sums in another order: a few ulps apart.
		const rel = 1e-12
		for k, got := range map[string]float64{
			"scale": m.Scale, "abs_rel": m.AbsRel, "sq_rel": m.SqRel, "rmse": m.RMSE,
			"rmse_log": m.RMSELog, "delta1": m.Delta1, "delta2": m.Delta2, "delta3": m.Delta3,
		} {
			near(t, name+" "+k, got, want[k], rel*math.Abs(want[k]))
		}
	}
	m, err := DisparityErrors(dest, dgt)
	if err != nil {
		t.Fatal(err)
	}
	want := fx.Disparity
	if float64(m.N) != want["n"] {
		t.Errorf("disparity N = %d, numpy %v", m.N, want["n"])
	}
	for k, got := range map[string]float64{"epe": m.EPE, "bad1": m.Bad1, "bad2": m.Bad2, "bad3": m.Bad3} {
		near(t, "disparity "+k, got, want[k], 1e-12*math.Abs(want[k]))
	}
}

func TestSummary(t *testing.T) {
	var s Summary
	if err := s.AddDepth("left", DepthMetrics{N: 12, AbsRel: 0.125, SqRel: 1, RMSE: 2.5, RMSELog: 0.25, Delta1: 0.5, Delta2: 0.75, Delta3: 1}); err != nil {
		t.Fatal(err)
	}
	if err := s.AddDepth("a much longer name", DepthMetrics{N: 123456, AbsRel: 10}); err != nil {
		t.Fatal(err)
	}
	if err := s.AddDisparity("disparity", DisparityMetrics{N: 1}); err == nil {
		t.Error("mixing disparity into a depth summary: no error")
	}
	lines := strings.Split(strings.TrimSuffix(s.String(), "\n"), "\n")
	if len(lines) != 3 {
		t.Fatalf("table has %d lines, want 3:\n%s", len(lines), s.String())
	}
	// Aligned: every line has the same length and the columns end at the
	// same offsets.
	for _, l := range lines[1:] {
		if len(l) != len(lines[0]) {
			t.Errorf("line lengths differ:\n%s", s.String())
		}
	}
	if !strings.HasPrefix(lines[1], "left  ") || !strings.Contains(lines[1], "0.1250") || !strings.HasSuffix(lines[1], "1.0000") {
		t.Errorf("row 1 = %q", lines[1])
	}
	if !strings.Contains(lines[2], "123456") || !strings.Contains(lines[2], "10.0000") {
		t.Errorf("row 2 = %q", lines[2])
	}
	var b strings.Builder
	if err := s.WriteCSV(&b); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(b.String())).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 3 || len(recs[0]) != 9 || recs[0][0] != "name" || recs[0][2] != "abs_rel" {
		t.Fatalf("CSV = %q", recs)
	}
	if v, _ := strconv.ParseFloat(recs[1][2], 64); v != 0.125 {
		t.Errorf("CSV abs_rel = %q", recs[1][2])
	}
	if recs[2][1] != "123456" {
		t.Errorf("CSV pixels = %q", recs[2][1])
	}
}

// TestMedian compares the selection-based median with sorting, on random
// data with many ties, odd and even lengths.
func TestMedian(t *testing.T) {
	r := rand.New(rand.NewPCG(5, 6))
	for n := 1; n < 200; n++ {
		v := make([]float64, n)
		for i := range v {
			v[i] = float64(r.IntN(n/3 + 1))
		}
		s := slices.Clone(v)
		slices.Sort(s)
		want := s[n/2]
		if n%2 == 0 {
			want = 0.5 * (s[n/2-1] + s[n/2])
		}
		if got := median(v); got != want {
			t.Fatalf("n = %d: median %v, want %v", n, got, want)
		}
	}
}
