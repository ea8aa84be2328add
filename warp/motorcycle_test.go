package warp_test

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// TestMotorcycleGroundTruth warps the right view of the Middlebury 2014
// Motorcycle pair (Scharstein et al., GCPR 2014; as shipped by Debian
// python3-skimage 0.19.3, reduced in testdata/motorcycle) by its
// ground-truth left disparity, converted to a fraction of the width, and
// checks that this rebuilds the left view far better than no shift, the
// disparity scaled by 0.9 or 1.1, or the opposite direction. This pins the
// sign and unit conventions against real data. The errors themselves are
// compared with SciPy 1.10.1 ndimage.map_coordinates (order 1), from
// testdata/warp/gen_motorcycle.py.
func TestMotorcycleGroundTruth(t *testing.T) {
	errs, cnt, scales := checkGroundTruth(t, filepath.Join("..", "testdata", "motorcycle"), 3)

	// The same numbers from SciPy 1.10.1 (float64, independent sampler).
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "warp", "motorcycle_errors.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Pixels int       `json:"pixels"`
		Scales []float32 `json:"scales"`
		Errors []float64 `json:"mean_abs_error"`
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	// The set of pixels may differ by a few where u lands on the image edge
	// within float32 rounding; each such pixel moves a mean of 76 801 terms
	// by at most 1/76 801 ≈ 1.3e-5.
	if d := ref.Pixels - cnt; d < -5 || d > 5 {
		t.Errorf("%d pixels used, SciPy reference used %d", cnt, ref.Pixels)
	}
	for k, s := range scales {
		if k >= len(ref.Scales) || ref.Scales[k] != s {
			t.Fatalf("reference scales %v, want %v", ref.Scales, scales)
		}
		if math.Abs(errs[k]-ref.Errors[k]) > 1e-4 {
			t.Errorf("scale %v: mean |error| %.6f, SciPy 1.10.1 map_coordinates gives %.6f", s, errs[k], ref.Errors[k])
		}
	}
}

// checkGroundTruth runs the convention checks of TestMotorcycleGroundTruth
// on the pair in dir (left.png, right.png, disp_left.pfm) and returns the
// mean absolute errors for each scale of the ground truth and the number of
// pixels they are taken over. The opposite direction must rebuild the left
// view at least opposite times worse than the ground truth.
func checkGroundTruth(t *testing.T, dir string, opposite float64) (errs []float64, cnt int, scales []float32) {
	t.Helper()
	left := testutil.Planar(t, filepath.Join(dir, "left.png"))
	right := testutil.Planar(t, filepath.Join(dir, "right.png"))
	f, err := os.Open(filepath.Join(dir, "disp_left.pfm"))
	if err != nil {
		t.Fatal(err)
	}
	pix, w, h, ch, err := depth.ReadPFM(f)
	f.Close()
	if err != nil {
		t.Fatal(err)
	}
	if ch != 1 || w != left.W || h != left.H || !left.SameShape(right) {
		t.Fatalf("disparity %dx%dx%d, images %s and %s", w, h, ch, left.Shape(), right.Shape())
	}
	known := make([]bool, len(pix))
	for i, v := range pix {
		known[i] = !math.IsInf(float64(v), 0) && !math.IsNaN(float64(v))
	}

	// rebuild warps the right view by scale times the ground truth.
	rebuild := func(scale float32, d warp.Direction) (out, mask *planar.Image) {
		disp := planar.New(1, 1, h, w)
		for i, v := range pix {
			if known[i] {
				disp.Pix[i] = scale * v / float32(w)
			}
		}
		out, mask, err := warp.Warp(right, disp, d, warp.Zero)
		if err != nil {
			t.Fatal(err)
		}
		return out, mask
	}
	scales = []float32{0, 0.9, 1, 1.1}
	outs := make([]*planar.Image, len(scales))
	use := append([]bool(nil), known...)
	for k, s := range scales {
		var mask *planar.Image
		outs[k], mask = rebuild(s, warp.RebuildLeft)
		for i, m := range mask.Pix {
			use[i] = use[i] && m == 1
		}
	}
	flipped, flippedMask := rebuild(1, warp.RebuildRight)
	plane := w * h
	// meanAbs is the mean absolute error over R, G, B and the pixels i
	// where use(i).
	meanAbs := func(out *planar.Image, use func(i int) bool) (float64, int) {
		var sum float64
		cnt := 0
		for i := 0; i < plane; i++ {
			if !use(i) {
				continue
			}
			for c := 0; c < 3; c++ {
				sum += math.Abs(float64(out.Pix[c*plane+i] - left.Pix[c*plane+i]))
			}
			cnt++
		}
		return sum / float64(3*cnt), cnt
	}
	errs = make([]float64, len(scales))
	for k := range scales {
		errs[k], cnt = meanAbs(outs[k], func(i int) bool { return use[i] })
	}
	t.Logf("mean |error| over %d pixels: scale 0 %.4f, 0.9 %.4f, 1 %.4f, 1.1 %.4f", cnt, errs[0], errs[1], errs[2], errs[3])

	// Conventions: margins chosen here, not from a source.
	if !(errs[2] < errs[0]/3) {
		t.Errorf("ground truth error %.4f is not far below the unshifted %.4f", errs[2], errs[0])
	}
	if !(errs[2] < 0.75*errs[1] && errs[2] < 0.75*errs[3]) {
		t.Errorf("ground truth error %.4f is not clearly below scale 0.9 (%.4f) and 1.1 (%.4f)", errs[2], errs[1], errs[3])
	}
	ef, nf := meanAbs(flipped, func(i int) bool { return known[i] && flippedMask.Pix[i] == 1 })
	eg, _ := meanAbs(outs[2], func(i int) bool { return known[i] && flippedMask.Pix[i] == 1 })
	if !(eg*opposite < ef) {
		t.Errorf("opposite direction rebuilds as well (%.4f vs %.4f over %d pixels): sign convention broken", ef, eg, nf)
	}

	return errs, cnt, scales
}

// TestAloeGroundTruth runs the same convention checks on the reduced
// Middlebury 2006 Aloe pair (Debian opencv-doc 4.6.0+dfsg-12, reduced in
// testdata/aloe): its disparity's scale and sign are those the project
// assumes. Its larger textureless areas rebuild about as well either way,
// so the opposite direction need only be 1.5 times worse (2.1 here).
func TestAloeGroundTruth(t *testing.T) {
	checkGroundTruth(t, filepath.Join("..", "testdata", "aloe"), 1.5)
}
