package loss

import (
	"math"
	"math/rand/v2"
	"testing"
)

type ssimFixture struct {
	Source string
	Cases  []struct {
		Name    string
		C, H, W int
		X, Y    []float64
		SSIM    []float64
	}
}

// TestSSIMAgainstSkimage compares the whole map, borders included, with
// skimage.metrics.structural_similarity of scikit-image 0.19.3 (Debian
// python3-skimage 0.19.3; win_size=3, gaussian_weights=False,
// use_sample_covariance=False, data_range=1, full=True, computed in
// float64; testdata/loss/gen_reference.py). Our border rule (edge pixel
// repeated) is scipy's 'reflect' for a 3-tap window, which skimage uses, so
// all pixels correspond.
func TestSSIMAgainstSkimage(t *testing.T) {
	var fx ssimFixture
	readJSON(t, "ssim_skimage.json", &fx)
	if len(fx.Cases) == 0 {
		t.Fatal("no cases in fixture")
	}
	for _, c := range fx.Cases {
		t.Run(c.Name, func(t *testing.T) {
			s := Shape{N: 1, C: c.C, H: c.H, W: c.W}
			got := make([]float32, len(c.X))
			var k SSIMKernel
			k.Forward(got, to32(c.X), to32(c.Y), s)
			// float32 arithmetic against skimage's float64: E[x²] − μ²
			// loses about 1e-7 absolute against C2 = 9e-4.
			closeSlices(t, "ssim map", got, c.SSIM, 2e-4)
		})
	}
}

func TestSSIMIdentity(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	s := Shape{N: 2, C: 3, H: 5, W: 7}
	x := uniform(rng, 2*3*5*7, 0, 1)
	got := make([]float32, len(x))
	var k SSIMKernel
	k.Forward(got, x, x, s)
	for i, v := range got {
		// SSIM(x, x) = 1 exactly in real arithmetic (Wang et al. 2004, eq. 13).
		if math.Abs(float64(v)-1) > 1e-5 {
			t.Fatalf("SSIM(x, x)[%d] = %v, want 1", i, v)
		}
	}
}

// TestSSIMWorkedExample checks the centre pixel of a 3×3 pair, whose
// window is the whole image, against arithmetic done by hand:
//
//	x = 0 0 0    y = 1 0 0
//	    0 1 0        0 0 0
//	    0 0 0        0 0 0
//
//	μx = μy = 1/9; E[x²] = E[y²] = 1/9, so σx² = σy² = 1/9 − 1/81 = 8/81;
//	E[xy] = 0, so σxy = −1/81. C1 = 1e-4, C2 = 9e-4.
//	2μxμy + C1 = 2/81 + 1e-4 = μx² + μy² + C1, so the luminance factor is 1 and
//	SSIM = (2σxy + C2) / (σx² + σy² + C2) = (−2/81 + 9e-4) / (16/81 + 9e-4)
//	     = (−0.0246914 + 0.0009) / (0.1975309 + 0.0009) = −0.0237914 / 0.1984309
//	     = −0.119897.
func TestSSIMWorkedExample(t *testing.T) {
	x := []float32{0, 0, 0, 0, 1, 0, 0, 0, 0}
	y := []float32{1, 0, 0, 0, 0, 0, 0, 0, 0}
	got := make([]float32, 9)
	var k SSIMKernel
	k.Forward(got, x, y, Shape{N: 1, C: 1, H: 3, W: 3})
	if math.Abs(float64(got[4])-(-0.119897)) > 2e-6 {
		t.Errorf("centre SSIM = %.7f, want -0.119897 (by hand)", got[4])
	}
}

// TestSSIMGradient checks Backward against central differences of
// Σ w·SSIM(x, y) with random weights w, for both images.
func TestSSIMGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, s := range []Shape{{N: 1, C: 2, H: 5, W: 6}, {N: 2, C: 1, H: 1, W: 4}, {N: 1, C: 1, H: 3, W: 1}} {
		n := s.N * s.C * s.H * s.W
		x, y := uniform(rng, n, 0, 1), uniform(rng, n, 0, 1)
		w := uniform(rng, n, -1, 1)
		var k SSIMKernel
		m := make([]float32, n)
		k.Forward(m, x, y, s)
		gx, gy := make([]float32, n), make([]float32, n)
		k.Backward(gx, gy, w, x, y, s)
		value := func(a, b []float32) float64 {
			var kk SSIMKernel
			out := make([]float32, n)
			kk.Forward(out, a, b, s)
			var sum float64
			for i := range out {
				sum += float64(w[i]) * float64(out[i])
			}
			return sum
		}
		// The map is float32, so each value carries about 6e-8 of rounding;
		// over a few dozen pixels a step below ~1/1000 drowns the difference
		// quotient in that noise, while a step of 1/16 shows SSIM's
		// curvature. 1/256 sits between (a sweep gave max |error| 6e-4).
		opts := &GradCheckOptions{Step: 1.0 / 256, AbsTol: 1e-3, RelTol: 2e-2}
		if _, err := CheckGradient(func(a []float32) float64 { return value(a, y) }, x, gx, opts); err != nil {
			t.Errorf("shape %+v, d/dx: %v", s, err)
		}
		if _, err := CheckGradient(func(b []float32) float64 { return value(x, b) }, y, gy, opts); err != nil {
			t.Errorf("shape %+v, d/dy: %v", s, err)
		}
	}
}
