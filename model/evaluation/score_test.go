package evaluation

import (
	"context"
	"encoding/json"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"sync/atomic"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
)

var fixtures = filepath.Join("..", "..", "testdata", "evaluation")

// fileEstimator returns the estimates committed in testdata/evaluation/
// estimates for the pair whose index is in the red channel of the left
// image's pixel (0, 0) (see make.py there).
type fileEstimator struct {
	names []string
	calls atomic.Int32
}

func (f *fileEstimator) EstimatePair(ctx context.Context, img, _ image.Image) (*model.Estimate, error) {
	f.calls.Add(1)
	r, _, _, _ := img.At(0, 0).RGBA()
	i := int(r >> 8)
	if i >= len(f.names) {
		return nil, fmt.Errorf("no pair %d", i)
	}
	load := func(suffix string) (depth.Map, error) {
		pix, w, h, _, err := depth.LoadPFM(filepath.Join(fixtures, "estimates", f.names[i]+suffix))
		if err != nil {
			return depth.Map{}, err
		}
		m := depth.Map{Pix: pix, Mask: make([]uint8, len(pix)), Stride: w, Rect: image.Rect(0, 0, w, h)}
		for k, v := range pix {
			if v > 0 && v <= math.MaxFloat32 {
				m.Mask[k] = 1
			}
		}
		return m, nil
	}
	d, err := load(".disp.pfm")
	if err != nil {
		return nil, err
	}
	z, err := load(".depth.pfm")
	if err != nil {
		return nil, err
	}
	return &model.Estimate{Disparity: &depth.Disparity{Map: d}, Depth: &depth.Depth{Map: z}}, nil
}

// refMetrics is a metrics object of reference.json.
type refMetrics struct {
	N                      int     `json:"n"`
	EPE                    float64 `json:"epe"`
	Bad1                   float64 `json:"bad1"`
	Bad2                   float64 `json:"bad2"`
	Bad3                   float64 `json:"bad3"`
	AbsRel                 float64 `json:"abs_rel"`
	SqRel                  float64 `json:"sq_rel"`
	RMSE                   float64 `json:"rmse"`
	RMSELog                float64 `json:"rmse_log"`
	Delta1, Delta2, Delta3 float64
}

// reference is reference.json.
type reference struct {
	Pairs []struct {
		Name             string
		Disparity, Depth refMetrics
		DisparityZero    refMetrics `json:"disparity_zero"`
		DisparityFilled  refMetrics `json:"disparity_filled"`
	}
	MeanDisparity refMetrics `json:"mean_disparity"`
	MeanDepth     refMetrics `json:"mean_depth"`
	// The disparity measures with the estimate's holes as 0 and filled.
	MeanDisparityZero   refMetrics `json:"mean_disparity_zero"`
	MeanDisparityFilled refMetrics `json:"mean_disparity_filled"`
	EmptyDisparity      []string   `json:"empty_disparity"`
	EmptyDepth          []string   `json:"empty_depth"`
}

// fixtureSet opens the data set of testdata/evaluation and returns it with
// its pair names, in order.
func fixtureSet(t *testing.T) (*dataset.Set, []string) {
	t.Helper()
	set, err := dataset.Open(filepath.Join(fixtures, "set"))
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, p := range set.Pairs {
		names = append(names, p.Name)
	}
	return set, names
}

func loadReference(t *testing.T) *reference {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(fixtures, "reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref reference
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	return &ref
}

// close reports whether got matches want to 1e-12 relative (both are
// float64 computations over the same float32 values; only the order of the
// sums differs), NaN matching NaN.
func close(got, want float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return math.IsNaN(got) && math.IsNaN(want)
	}
	return math.Abs(got-want) <= 1e-12*math.Max(1, math.Abs(want))
}

func checkDisparity(t *testing.T, what string, got depth.DisparityMetrics, want refMetrics) {
	t.Helper()
	if want.N == 0 {
		nan := math.NaN()
		want.EPE, want.Bad1, want.Bad2, want.Bad3 = nan, nan, nan, nan
	}
	if got.N != want.N || !close(got.EPE, want.EPE) || !close(got.Bad1, want.Bad1) || !close(got.Bad2, want.Bad2) || !close(got.Bad3, want.Bad3) {
		t.Errorf("%s disparity: got %+v, numpy %+v", what, got, want)
	}
}

func checkDepth(t *testing.T, what string, got depth.DepthMetrics, want refMetrics) {
	t.Helper()
	if want.N == 0 {
		nan := math.NaN()
		want.AbsRel, want.SqRel, want.RMSE, want.RMSELog, want.Delta1, want.Delta2, want.Delta3 = nan, nan, nan, nan, nan, nan, nan
	}
	if got.N != want.N || !close(got.AbsRel, want.AbsRel) || !close(got.SqRel, want.SqRel) || !close(got.RMSE, want.RMSE) ||
		!close(got.RMSELog, want.RMSELog) || !close(got.Delta1, want.Delta1) || !close(got.Delta2, want.Delta2) || !close(got.Delta3, want.Delta3) {
		t.Errorf("%s depth: got %+v, numpy %+v", what, got, want)
	}
}

// TestScoreNumpy scores the committed estimates of testdata/evaluation
// against its data set and compares every per-pair figure and the means
// with numpy 1.24.2 (make.py there): EPE, bad-1/2/3, abs rel, sq rel,
// RMSE, RMSE log and the δ thresholds, the empty pairs (c without
// disparity truth, d without depth inside the rig's range) listed and left
// out of the means. The result must not depend on the number of workers.
func TestScoreNumpy(t *testing.T) {
	ref := loadReference(t)
	set, names := fixtureSet(t)
	for _, workers := range []int{1, 3} {
		est := &fileEstimator{names: names}
		var done []int
		var inspected []string
		rep, err := score(context.Background(), est, set, &ScoreOptions{Workers: workers,
			Progress: func(d, n int) {
				if n != 4 {
					t.Errorf("progress total %d", n)
				}
				done = append(done, d)
			},
			Inspect: func(s *PairScore, e *model.Estimate, r *dataset.Record) error {
				if r.Name != s.Name || e.Disparity == nil || r.DispLeft == nil {
					t.Errorf("inspect %s: record %s", s.Name, r.Name)
				}
				inspected = append(inspected, s.Name)
				return nil
			}})
		if err != nil {
			t.Fatal(err)
		}
		if !rep.HasDisparity || !rep.HasDepth || len(rep.Pairs) != len(ref.Pairs) || est.calls.Load() != 4 {
			t.Fatalf("report %+v after %d estimates", rep, est.calls.Load())
		}
		for i, p := range ref.Pairs {
			got := rep.Pairs[i]
			if got.Name != p.Name {
				t.Fatalf("pair %d is %s, numpy %s", i, got.Name, p.Name)
			}
			checkDisparity(t, p.Name, got.Disparity, p.Disparity)
			checkDepth(t, p.Name, got.Depth, p.Depth)
		}
		checkDisparity(t, "mean", rep.Disparity, ref.MeanDisparity)
		checkDepth(t, "mean", rep.Depth, ref.MeanDepth)
		if !slices.Equal(rep.EmptyDisparity, ref.EmptyDisparity) || !slices.Equal(rep.EmptyDepth, ref.EmptyDepth) ||
			len(ref.EmptyDisparity) != 1 || len(ref.EmptyDepth) != 1 {
			t.Errorf("empty pairs: disparity %v, depth %v; numpy %v, %v", rep.EmptyDisparity, rep.EmptyDepth, ref.EmptyDisparity, ref.EmptyDepth)
		}
		if !slices.Equal(done, []int{1, 2, 3, 4}) || !slices.Equal(inspected, names) {
			t.Errorf("workers %d: progress %v, inspected %v", workers, done, inspected)
		}
	}
}

// TestScoreErrors: bad sets, options and files give errors naming the
// problem; an error of Inspect stops Score.
func TestScoreErrors(t *testing.T) {
	set, names := fixtureSet(t)
	noTruth := &dataset.Set{Dir: "x", Pairs: set.Pairs, Rig: set.Rig}
	unrigged := slices.Clone(set.Pairs)
	for i := range unrigged {
		unrigged[i].Rig = nil
	}
	depthNoRig := &dataset.Set{Dir: "y", Pairs: unrigged, Truth: []dataset.Kind{dataset.DepthLeft}}
	for name, c := range map[string]struct {
		set  *dataset.Set
		opt  *ScoreOptions
		want string
	}{
		"nil set":           {nil, nil, "no pairs"},
		"no truth":          {noTruth, nil, "x has no truth/disp_left"},
		"depth without rig": {depthNoRig, nil, "y has no truth/disp_left"},
		"negative workers":  {set, &ScoreOptions{Workers: -1}, "workers"},
	} {
		_, err := Score(context.Background(), nil, c.set, c.opt)
		if err == nil || !strings.HasPrefix(err.Error(), "evaluation: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want an error with %q", name, err, c.want)
		}
	}
	if d, z := Scorable(depthNoRig); d || z {
		t.Errorf("Scorable of depth truth without a rig: %v, %v", d, z)
	}
	stop := fmt.Errorf("stop here")
	_, err := score(context.Background(), &fileEstimator{names: names}, set, &ScoreOptions{Workers: 1,
		Inspect: func(*PairScore, *model.Estimate, *dataset.Record) error { return stop }})
	if err != stop {
		t.Errorf("Inspect's error: %v", err)
	}
	// A pair's file that breaks after Open is named.
	dir := t.TempDir()
	if err := os.CopyFS(dir, os.DirFS(filepath.Join(fixtures, "set"))); err != nil {
		t.Fatal(err)
	}
	broken, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	bad := filepath.Join(dir, "truth", "depth_left", "b.pfm")
	os.WriteFile(bad, []byte("Pf\n"), 0o644)
	_, err = score(context.Background(), &fileEstimator{names: []string{"a", "b", "c", "d"}}, broken, &ScoreOptions{Workers: 2})
	if err == nil || !strings.HasPrefix(err.Error(), "evaluation: pair b: ") || !strings.Contains(err.Error(), bad) {
		t.Errorf("broken file: %v", err)
	}
}

// TestScoreLeftView runs Score with a real model.Estimator on the committed
// synthetic greenhouse pairs (256×128, package synth) and weights whose
// heads output constants, d_L ≠ d_R, for a network of 128×64: the EPE and
// bad-3 must equal a direct computation from model.Net's channel 0 scaled
// to each pair's width and the truth files read with depth.LoadPFM — the
// left view, at the pair's own resolution — and d_R must score otherwise.
func TestScoreLeftView(t *testing.T) {
	cfg := model.Config{Width: 128, Height: 64, Encoder: []int{8, 8, 12, 12, 16}, Decoder: []int{8, 8, 8, 12, 12}}
	w, err := model.NewWeights(cfg, 5)
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range w.Params {
		if strings.HasPrefix(name, "head") {
			clear(v) // constant heads: the output is the activation of the bias
		}
	}
	w.Params["head0.bias"][0], w.Params["head0.bias"][1] = -1.5, -4
	net, err := model.NewNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	out, err := net.Forward(planar.New(1, 3, cfg.Height, cfg.Width)) // any input: the heads are constant
	if err != nil {
		t.Fatal(err)
	}
	d0 := out[0]
	left, right := float64(d0.Pix[0]), float64(d0.Pix[d0.H*d0.W])
	set, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "greenhouse"))
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Score(context.Background(), w, set, &ScoreOptions{Workers: 2})
	if err != nil {
		t.Fatal(err)
	}
	var epe, bad3, epeRight float64
	for _, p := range set.Pairs {
		g, width, _, _, err := depth.LoadPFM(p.Truth[dataset.DispLeft])
		if err != nil {
			t.Fatal(err)
		}
		var s, s3, sr float64
		n := 0
		for _, v := range g {
			if !(v > 0) || math.IsInf(float64(v), 0) {
				continue
			}
			e := math.Abs(left*float64(width) - float64(v))
			s += e
			if e > 3 {
				s3++
			}
			sr += math.Abs(right*float64(width) - float64(v))
			n++
		}
		epe += s / float64(n) / float64(len(set.Pairs))
		bad3 += s3 / float64(n) / float64(len(set.Pairs))
		epeRight += sr / float64(n) / float64(len(set.Pairs))
	}
	t.Logf("EPE %.4f px (direct %.4f; d_R would give %.4f), bad-3 %.4f (direct %.4f)", rep.Disparity.EPE, epe, epeRight, rep.Disparity.Bad3, bad3)
	if len(rep.Pairs) != 3 || math.Abs(rep.Disparity.EPE-epe) > 1e-4*epe || math.Abs(rep.Disparity.Bad3-bad3) > 1e-9 {
		t.Errorf("Score: EPE %v, bad-3 %v over %d pairs; direct: %v, %v", rep.Disparity.EPE, rep.Disparity.Bad3, len(rep.Pairs), epe, bad3)
	}
	if math.Abs(epeRight-epe) < 0.5 {
		t.Errorf("d_L and d_R give EPE %.3f and %.3f px: the test cannot tell the views apart", epe, epeRight)
	}
}
