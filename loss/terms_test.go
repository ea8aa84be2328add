package loss

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/warp"
)

// torchFixture is testdata/loss/objective_torch.json, written by
// gen_reference.py with PyTorch 1.13.1 (Debian python3-torch 1.13.1) in
// float64 with autograd.
type torchFixture struct {
	Source string
	Scales []struct {
		N, C, H, W           int
		Left, Right          []float64
		DispL, DispR         []float64
		GradDispL, GradDispR []float64
	}
	Terms struct {
		Appearance, Smoothness, Consistency, Total float64
	}
	Appearance struct {
		Recon, Mask           []float64
		Value                 float64
		GradTarget, GradRecon []float64
	}
	Smoothness map[string]struct {
		Value float64
		Grad  []float64
	}
	Consistency struct {
		Value        float64
		GradL, GradR []float64
	}
}

func loadTorch(t *testing.T) *torchFixture {
	var fx torchFixture
	readJSON(t, "objective_torch.json", &fx)
	if len(fx.Scales) != 2 {
		t.Fatalf("fixture has %d scales, want 2", len(fx.Scales))
	}
	return &fx
}

func closeValue(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if !(math.Abs(got-want) <= tol) {
		t.Errorf("%s = %.9g, want %.9g (tolerance %.2g)", what, got, want, tol)
	}
}

// ---------------------------------------------------------------- appearance

// TestAppearanceAgainstTorch compares value and both gradients with the
// PyTorch 1.13.1 implementation in gen_reference.py (float64 autograd).
func TestAppearanceAgainstTorch(t *testing.T) {
	fx := loadTorch(t)
	sc := fx.Scales[0]
	s := Shape{N: sc.N, C: sc.C, H: sc.H, W: sc.W}
	n := len(sc.Left)
	gt, gr := make([]float32, n), make([]float32, n)
	var k AppearanceKernel
	v := k.Eval(gt, gr, to32(sc.Left), to32(fx.Appearance.Recon), to32(fx.Appearance.Mask), s, DefaultAlpha)
	closeValue(t, "appearance", v, fx.Appearance.Value, 2e-6)
	closeSlices(t, "d/dtarget", gt, fx.Appearance.GradTarget, 2e-6)
	closeSlices(t, "d/drecon", gr, fx.Appearance.GradRecon, 2e-6)
}

func TestAppearanceIdentical(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	s := Shape{N: 2, C: 3, H: 4, W: 5}
	x := uniform(rng, 2*3*4*5, 0, 1)
	var k AppearanceKernel
	// SSIM(x, x) = 1 and |x − x| = 0, so the error is 0 (by definition).
	if v := k.Eval(nil, nil, x, x, nil, s, DefaultAlpha); math.Abs(v) > 1e-6 {
		t.Errorf("appearance of identical images = %g, want 0", v)
	}
}

// TestAppearanceL1ByHand: α = 0, two channels, the fourth pixel masked out.
//
//	channel 0 |I − Î| = 0.1, 0, 0.3, (0.5)   channel 1 = 0.2, 0.2, 0.2, (0.7)
//	per pixel mean   = 0.15, 0.1, 0.25
//	value            = (0.15 + 0.1 + 0.25) / 3 = 0.5/3 = 0.1666667
//	d/dÎ of channel 0 = sign(Î − I) / (C·valid) = +1/6, 0 (|·|' at 0 is 0), −1/6, 0
func TestAppearanceL1ByHand(t *testing.T) {
	target := []float32{0.2, 0.5, 0.9, 0.4, 0.1, 0.1, 0.5, 0}
	recon := []float32{0.3, 0.5, 0.6, 0.9, 0.3, 0.3, 0.3, 0.7}
	mask := []float32{1, 1, 1, 0}
	s := Shape{N: 1, C: 2, H: 2, W: 2}
	gr := make([]float32, 8)
	var k AppearanceKernel
	v := k.Eval(nil, gr, target, recon, mask, s, 0)
	closeValue(t, "L1 appearance", v, 0.5/3, 1e-7)
	closeSlices(t, "d/drecon", gr, []float64{1.0 / 6, 0, -1.0 / 6, 0, 1.0 / 6, 1.0 / 6, -1.0 / 6, 0}, 1e-7)
	// No valid pixel: value and gradient 0 (our documented choice).
	gr[0] = 5
	if v := k.Eval(nil, gr, target, recon, []float32{0, 0, 0, 0}, s, 0.85); v != 0 || gr[0] != 0 {
		t.Errorf("all masked: value %v, gradient[0] %v, want 0 and 0", v, gr[0])
	}
}

// separate redraws recon where |target − recon| < gap, away from |·|'s kink.
func separate(rng *rand.Rand, target, recon []float32, gap float32) {
	for i := range recon {
		for d := target[i] - recon[i]; d < gap && d > -gap; d = target[i] - recon[i] {
			recon[i] = rng.Float32()
		}
	}
}

func TestAppearanceGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	s := Shape{N: 2, C: 3, H: 4, W: 5}
	n := s.N * s.C * s.H * s.W
	target, recon := uniform(rng, n, 0, 1), uniform(rng, n, 0, 1)
	separate(rng, target, recon, 0.02)
	mask := uniform(rng, s.N*s.H*s.W, 0, 1)
	for i := range mask {
		mask[i] = float32(math.Round(float64(mask[i]) + 0.2)) // about 70 % valid
	}
	for _, alpha := range []float32{0, DefaultAlpha, 1} {
		var k AppearanceKernel
		gt, gr := make([]float32, n), make([]float32, n)
		k.Eval(gt, gr, target, recon, mask, s, alpha)
		opts := &GradCheckOptions{Step: 1.0 / 256, AbsTol: 5e-5, RelTol: 2e-2}
		f := func(tg, rc []float32) float64 {
			var kk AppearanceKernel
			return kk.Eval(nil, nil, tg, rc, mask, s, alpha)
		}
		if _, err := CheckGradient(func(x []float32) float64 { return f(target, x) }, recon, gr, opts); err != nil {
			t.Errorf("alpha %v, d/drecon: %v", alpha, err)
		}
		if _, err := CheckGradient(func(x []float32) float64 { return f(x, recon) }, target, gt, opts); err != nil {
			t.Errorf("alpha %v, d/dtarget: %v", alpha, err)
		}
	}
}

// ---------------------------------------------------------------- smoothness

func TestSmoothnessAgainstTorch(t *testing.T) {
	fx := loadTorch(t)
	sc := fx.Scales[0]
	s := Shape{N: sc.N, C: sc.C, H: sc.H, W: sc.W}
	for name, norm := range map[string]bool{"normalized": true, "raw": false} {
		ref, ok := fx.Smoothness[name]
		if !ok {
			t.Fatalf("fixture lacks smoothness %q", name)
		}
		g := make([]float32, len(sc.DispL))
		var k SmoothnessKernel
		v := k.Eval(g, to32(sc.DispL), to32(sc.Left), s, norm)
		// Values are per-image-mean relative (normalized) or fractions of
		// the width (raw); tolerances follow their size.
		tol := 1e-6 * math.Max(1, math.Abs(ref.Value))
		closeValue(t, "smoothness "+name, v, ref.Value, tol)
		closeSlices(t, "smoothness gradient "+name, g, ref.Grad, 1e-5*maxAbs(ref.Grad))
	}
}

func maxAbs(a []float64) float64 {
	m := 0.0
	for _, v := range a {
		m = math.Max(m, math.Abs(v))
	}
	return m
}

func TestSmoothnessByHand(t *testing.T) {
	const h, w = 3, 4
	s := Shape{N: 1, C: 3, H: h, W: w}
	flat := make([]float32, 3*h*w)
	for i := range flat {
		flat[i] = 0.4
	}
	constant := make([]float32, h*w)
	ramp := make([]float32, h*w)
	for i := range constant {
		constant[i] = 0.1
		ramp[i] = 0.01 * float32(i%w)
	}
	var k SmoothnessKernel
	// A constant disparity has no differences: 0.
	if v := k.Eval(nil, constant, flat, s, false); v != 0 {
		t.Errorf("constant disparity: %g, want 0", v)
	}
	if v := k.Eval(nil, constant, flat, s, true); v != 0 {
		t.Errorf("constant disparity, normalised: %g, want 0", v)
	}
	// A ramp of slope 0.01 per column on a flat image: every x-term is
	// 0.01·exp(0) and every y-term 0, so the value is the slope.
	closeValue(t, "ramp on flat image", k.Eval(nil, ramp, flat, s, false), 0.01, 1e-9)
	// Normalised: the mean is 0.01·(0+1+2+3)/4 = 0.015, so the slope
	// becomes 0.01/(0.015 + 5e-6), ε = SmoothnessMeanEpsilon.
	closeValue(t, "ramp on flat image, normalised", k.Eval(nil, ramp, flat, s, true), 0.01/(0.015+5e-6), 1e-6)
	// A collapsed map (mean 1.5e-9, far below ε): the normalisation's gain
	// is capped at 1/ε, so the value is about the slope times 1/ε and the
	// gradient stays finite and of order 1/ε.
	tiny := make([]float32, h*w)
	for i := range tiny {
		tiny[i] = 1e-9 * float32(i%w)
	}
	grad := make([]float32, h*w)
	closeValue(t, "collapsed ramp, normalised", k.Eval(grad, tiny, flat, s, true), 1e-9/(1.5e-9+5e-6), 1e-9)
	for i, g := range grad {
		if math.IsNaN(float64(g)) || math.Abs(float64(g)) > 1/5e-6 {
			t.Fatalf("collapsed ramp: gradient %g at %d, want |g| ≤ 1/ε", g, i)
		}
	}
	// An edge of height 1 in every channel between columns 1 and 2 weighs
	// that difference by exp(−1): (0.01 + 0.01·e⁻¹ + 0.01)/3 per row.
	edge := append([]float32(nil), flat...)
	for i := range edge {
		if i%w >= 2 {
			edge[i] = 1.4
		}
	}
	closeValue(t, "ramp across an edge", k.Eval(nil, ramp, edge, s, false), 0.01*(2+math.Exp(-1))/3, 1e-9)
}

// spread redraws d until every horizontal and vertical neighbour pair
// differs by at least gap, keeping central differences off |·|'s kink.
func spread(rng *rand.Rand, d []float32, h, w int, lo, hi, gap float64) {
	for again := true; again; {
		again = false
		for i := range d {
			x, y := i%w, i/w%h
			ok := func(j int) bool { return math.Abs(float64(d[i]-d[j])) >= gap }
			if (x+1 < w && !ok(i+1)) || (y+1 < h && !ok(i+w)) {
				d[i] = float32(lo + (hi-lo)*rng.Float64())
				again = true
			}
		}
	}
}

func TestSmoothnessGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 10))
	s := Shape{N: 2, C: 3, H: 5, W: 6}
	np := s.N * s.H * s.W
	img := uniform(rng, s.N*s.C*s.H*s.W, 0, 1)
	d := uniform(rng, np, 0.05, 0.3)
	spread(rng, d, s.H, s.W, 0.05, 0.3, 0.005)
	for _, norm := range []bool{false, true} {
		var k SmoothnessKernel
		g := make([]float32, np)
		k.Eval(g, d, img, s, norm)
		f := func(x []float32) float64 {
			var kk SmoothnessKernel
			return kk.Eval(nil, x, img, s, norm)
		}
		opts := &GradCheckOptions{Step: 1.0 / 4096, AbsTol: 1e-5, RelTol: 1e-2}
		if _, err := CheckGradient(f, d, g, opts); err != nil {
			t.Errorf("normalize %v: %v", norm, err)
		}
	}
}

// ---------------------------------------------------------------- consistency

func TestConsistencyAgainstTorch(t *testing.T) {
	fx := loadTorch(t)
	sc := fx.Scales[0]
	s := Shape{N: sc.N, C: 1, H: sc.H, W: sc.W}
	gl, gr := make([]float32, len(sc.DispL)), make([]float32, len(sc.DispR))
	var k ConsistencyKernel
	v := k.Eval(gl, gr, to32(sc.DispL), to32(sc.DispR), s, warp.Zero)
	closeValue(t, "consistency", v, fx.Consistency.Value, 1e-6)
	closeSlices(t, "d/ddL", gl, fx.Consistency.GradL, 1e-5*maxAbs(fx.Consistency.GradL))
	closeSlices(t, "d/ddR", gr, fx.Consistency.GradR, 1e-5*maxAbs(fx.Consistency.GradR))
}

func TestConsistencyMatchingPair(t *testing.T) {
	// A fronto-parallel plane: both views see the same constant disparity,
	// and each warp returns that constant wherever it is valid.
	s := Shape{N: 2, C: 1, H: 3, W: 8}
	d := make([]float32, 2*3*8)
	for i := range d {
		d[i] = 0.3
	}
	for _, b := range []warp.Border{warp.Zero, warp.Clamp} {
		var k ConsistencyKernel
		if v := k.Eval(nil, nil, d, d, s, b); v != 0 {
			t.Errorf("border %v: matching pair gives %g, want 0", b, v)
		}
	}
	// A shift of exactly 2 pixels (d = 2/8 of W = 8) with a disparity
	// that differs from row to row (a plane tilted vertically, which keeps
	// each row constant): every valid sample reads the same row of the
	// other map, which holds the same value. By construction, 0.
	dl, dr := make([]float32, 3*8), make([]float32, 3*8)
	for i := range dl {
		row := i / 8
		dl[i] = 0.25 + 0.125*float32(row) // shifts of 2, 3 and 4 pixels
		dr[i] = dl[i]
	}
	var k ConsistencyKernel
	if v := k.Eval(nil, nil, dl, dr, Shape{N: 1, C: 1, H: 3, W: 8}, warp.Zero); v != 0 {
		t.Errorf("integer shifts varying by row: %g, want 0", v)
	}
	// Breaking the match in one valid pixel gives a non-zero value.
	dr[5] += 0.1
	if v := k.Eval(nil, nil, dl, dr, Shape{N: 1, C: 1, H: 3, W: 8}, warp.Zero); !(v > 0) {
		t.Errorf("mismatched pair: %g, want > 0", v)
	}
}

func TestConsistencyGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	s := Shape{N: 2, C: 1, H: 3, W: 8}
	np := s.N * s.H * s.W
	const step = 1.0 / 4096
	dl, dr := uniform(rng, np, 0.02, 0.3), uniform(rng, np, 0.02, 0.3)
	for _, b := range []warp.Border{warp.Zero, warp.Clamp} {
		// Keep sample positions 0.01 px from integers (a step moves them by
		// W·step ≈ 0.002 px).
		safeDisparities(rng, dl, s.W, -1, 0.02, 0.3, 0.01)
		safeDisparities(rng, dr, s.W, +1, 0.02, 0.3, 0.01)
		var k ConsistencyKernel
		gl, gr := make([]float32, np), make([]float32, np)
		k.Eval(gl, gr, dl, dr, s, b)
		optsL := &GradCheckOptions{Step: step, AbsTol: 1e-4, RelTol: 1e-2}
		if _, err := CheckGradient(func(x []float32) float64 {
			var kk ConsistencyKernel
			return kk.Eval(nil, nil, x, dr, s, b)
		}, dl, gl, optsL); err != nil {
			t.Errorf("border %v, d/ddL: %v", b, err)
		}
		if _, err := CheckGradient(func(x []float32) float64 {
			var kk ConsistencyKernel
			return kk.Eval(nil, nil, dl, x, s, b)
		}, dr, gr, optsL); err != nil {
			t.Errorf("border %v, d/ddR: %v", b, err)
		}
	}
}

func TestExpNeg(t *testing.T) {
	worst := 0.0
	for i := 0; i <= 200000; i++ {
		x := -float32(i) * 87 / 200000
		want := math.Exp(float64(x))
		rel := math.Abs(float64(expNeg(x))-want) / want
		worst = math.Max(worst, rel)
	}
	t.Logf("expNeg: max relative error %.3g over [-87, 0]", worst)
	// Reference: Go's math.Exp in float64.
	if worst > 3e-7 {
		t.Errorf("expNeg relative error %.3g, want below 3e-7", worst)
	}
	if expNeg(float32(math.Inf(-1))) != 0 || expNeg(0) != 1 || !math.IsNaN(float64(expNeg(float32(math.NaN())))) {
		t.Error("expNeg special values wrong")
	}
}
