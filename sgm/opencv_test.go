package sgm

import (
	"context"
	"encoding/json"
	"image"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
)

// fixture is one pair of testdata/sgm/opencv.json (testdata/sgm/make.py).
type fixture struct {
	Left, Right, Truth string
	NumDisparities     int `json:"num_disparities"`
	Width, Height      int
	Valid              int
	HolesAsZero        scoresJSON `json:"holes_as_zero"`
	Filled             scoresJSON
}

type scoresJSON struct {
	Pixels          int
	EPE, Bad1, Bad3 float64
}

func loadFixtures(t testing.TB) map[string]fixture {
	t.Helper()
	data, err := os.ReadFile("../testdata/sgm/opencv.json")
	if err != nil {
		t.Fatal(err)
	}
	var f struct{ Pairs map[string]fixture }
	if err := json.Unmarshal(data, &f); err != nil {
		t.Fatal(err)
	}
	if len(f.Pairs) == 0 {
		t.Fatal("no pairs in opencv.json")
	}
	return f.Pairs
}

// loadDisparity reads a PFM disparity; +Inf (unknown) becomes invalid.
func loadDisparity(t testing.TB, path string) *depth.Disparity {
	t.Helper()
	pix, w, h, c, err := depth.LoadPFM(filepath.Join("..", path))
	if err != nil || c != 1 {
		t.Fatalf("%s: %v (channels %d)", path, err, c)
	}
	d, err := depth.NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range pix {
		if !math.IsInf(float64(v), 0) {
			d.Set(i%w, i/w, v)
		}
	}
	return d
}

// denseScores scores est over every pixel with ground truth: holes as
// disparity 0, and holes filled along the scan line (then any row left
// empty as 0).
func denseScores(t testing.TB, est, gt *depth.Disparity) (zero, filled depth.DisparityMetrics) {
	t.Helper()
	z := est.Clone()
	if _, err := ZeroHoles(z); err != nil {
		t.Fatal(err)
	}
	f := est.Clone()
	if _, err := FillHoles(f); err != nil {
		t.Fatal(err)
	}
	if _, err := ZeroHoles(f); err != nil {
		t.Fatal(err)
	}
	var err error
	if zero, err = depth.DisparityErrors(z, gt); err != nil {
		t.Fatal(err)
	}
	if filled, err = depth.DisparityErrors(f, gt); err != nil {
		t.Fatal(err)
	}
	return zero, filled
}

// agreement returns the pixels valid in both maps and the share of them
// where the two disparities differ by at most 1 px.
func agreement(a, b *depth.Disparity) (both int, share float64) {
	close := 0
	for i := range a.Pix {
		if a.Mask[i] != 0 && b.Mask[i] != 0 {
			both++
			if math.Abs(float64(a.Pix[i]-b.Pix[i])) <= 1 {
				close++
			}
		}
	}
	return both, float64(close) / float64(max(both, 1))
}

// OpenCV 4.6.0 StereoSGBM's disparities (testdata/sgm/make.py) scored here
// with FillHoles, ZeroHoles and depth.DisparityErrors give the scores NumPy
// computed in the script: the scan-line fill agrees with an independent
// implementation.
func TestFillMatchesOpenCVScoring(t *testing.T) {
	for name, f := range loadFixtures(t) {
		cv := loadDisparity(t, "testdata/sgm/opencv_"+name+".pfm")
		gt := loadDisparity(t, f.Truth)
		if cv.Valid() != f.Valid {
			t.Errorf("%s: %d valid pixels, the script counted %d", name, cv.Valid(), f.Valid)
		}
		zero, filled := denseScores(t, cv, gt)
		for _, c := range []struct {
			what string
			got  depth.DisparityMetrics
			want scoresJSON
		}{{"holes as 0", zero, f.HolesAsZero}, {"filled", filled, f.Filled}} {
			if c.got.N != c.want.Pixels || math.Abs(c.got.EPE-c.want.EPE) > 1e-6 || math.Abs(c.got.Bad3-c.want.Bad3) > 1e-9 || math.Abs(c.got.Bad1-c.want.Bad1) > 1e-9 {
				t.Errorf("%s, %s: N %d EPE %.7f bad-1 %.6f bad-3 %.6f; NumPy: N %d EPE %.7f bad-1 %.6f bad-3 %.6f", name, c.what,
					c.got.N, c.got.EPE, c.got.Bad1, c.got.Bad3, c.want.Pixels, c.want.EPE, c.want.Bad1, c.want.Bad3)
			}
		}
	}
}

// Our matcher beside OpenCV 4.6.0 StereoSGBM (the parameters of issue 15,
// testdata/sgm/make.py) on the same pairs and disparity range: agreement
// within 1 px where both are valid, and both scored densely against the
// ground truth. Motorcycle is evaluation data only: nothing was tuned on it.
func TestAgainstOpenCV(t *testing.T) {
	if testing.Short() {
		t.Skip("matches 7 pairs")
	}
	for _, name := range []string{"motorcycle", "greenhouse_000000", "greenhouse_000001", "greenhouse_000002", "storage_000000", "storage_000001", "storage_000002"} {
		f, ok := loadFixtures(t)[name]
		if !ok {
			t.Fatalf("no fixture %s", name)
		}
		cv := loadDisparity(t, "testdata/sgm/opencv_"+name+".pfm")
		gt := loadDisparity(t, f.Truth)
		m, err := NewMatcher(&Options{MaxDisparity: f.NumDisparities - 1})
		if err != nil {
			t.Fatal(err)
		}
		res, err := m.Match(context.Background(), testutil.PNG(t, filepath.Join("..", f.Left)), testutil.PNG(t, filepath.Join("..", f.Right)))
		if err != nil {
			t.Fatal(err)
		}
		both, share := agreement(res.Disparity, cv)
		zero, filled := denseScores(t, res.Disparity, gt)
		t.Logf("%-18s agree within 1 px on %.1f%% of %d pixels both valid; scored over all %d pixels with truth: ours holes-as-0 EPE %.3f bad-3 %.1f%%, filled EPE %.3f bad-3 %.1f%% (valid %.1f%%); OpenCV holes-as-0 EPE %.3f bad-3 %.1f%%, filled EPE %.3f bad-3 %.1f%% (valid %.1f%%)",
			name, 100*share, both, zero.N, zero.EPE, 100*zero.Bad3, filled.EPE, 100*filled.Bad3, 100*float64(res.Disparity.Valid())/float64(f.Width*f.Height),
			f.HolesAsZero.EPE, 100*f.HolesAsZero.Bad3, f.Filled.EPE, 100*f.Filled.Bad3, 100*float64(f.Valid)/float64(f.Width*f.Height))
		if share < 0.90 {
			t.Errorf("%s: agreement with OpenCV within 1 px on %.1f%% of the pixels both mark valid, want ≥ 90%% (issue 15)", name, 100*share)
		}
		// The targets of issue 15 on Motorcycle at 370×250, holes filled.
		if name == "motorcycle" && (filled.EPE > 1.1 || filled.Bad3 > 0.085) {
			t.Errorf("motorcycle, filled: EPE %.3f px, bad-3 %.2f%%; want ≤ 1.1 px and ≤ 8.5%%", filled.EPE, 100*filled.Bad3)
		}
	}
}
