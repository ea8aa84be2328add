package loss

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

func fixtureScales(fx *torchFixture) []Scale {
	out := make([]Scale, len(fx.Scales))
	for i, sc := range fx.Scales {
		out[i] = Scale{
			Left: to32(sc.Left), Right: to32(sc.Right),
			DispL: to32(sc.DispL), DispR: to32(sc.DispR),
			Shape: Shape{N: sc.N, C: sc.C, H: sc.H, W: sc.W},
		}
	}
	return out
}

// TestObjectiveAgainstTorch compares the two-scale objective, each term
// and every disparity gradient with the PyTorch 1.13.1 implementation in
// gen_reference.py (Debian python3-torch 1.13.1, float64 autograd, default
// weights: appearance 1, smoothness 0.1/2^s, consistency 1, α = 0.85,
// mean-normalised smoothness, zero border).
func TestObjectiveAgainstTorch(t *testing.T) {
	fx := loadTorch(t)
	scales := fixtureScales(fx)
	grads := make([]DispGrad, len(scales))
	for i, sc := range scales {
		grads[i] = DispGrad{DispL: make([]float32, len(sc.DispL)), DispR: make([]float32, len(sc.DispR))}
	}
	per := make([]Terms, len(scales))
	var o Objective
	got := o.Eval(per, grads, scales)
	want := fx.Terms
	closeValue(t, "appearance", got.Appearance, want.Appearance, 2e-6)
	closeValue(t, "smoothness", got.Smoothness, want.Smoothness, 2e-6)
	closeValue(t, "consistency", got.Consistency, want.Consistency, 2e-6)
	closeValue(t, "total", got.Total, want.Total, 5e-6)
	var sum Terms
	for _, p := range per {
		sum.add(p)
	}
	closeValue(t, "sum of per-scale totals", sum.Total, got.Total, 1e-12)
	for i, sc := range fx.Scales {
		closeSlices(t, "d/ddL", grads[i].DispL, sc.GradDispL, 2e-5*maxAbs(sc.GradDispL))
		closeSlices(t, "d/ddR", grads[i].DispR, sc.GradDispR, 2e-5*maxAbs(sc.GradDispR))
	}
	// Value-only evaluation gives the same terms.
	if again := o.Eval(nil, nil, scales); again != got {
		t.Errorf("value-only terms %+v differ from %+v", again, got)
	}
}

// randomScales builds a two-scale problem: images with some structure and
// disparities kept away from sampling kinks.
func randomScales(rng *rand.Rand, shapes []Shape, margin float64) []Scale {
	out := make([]Scale, len(shapes))
	for i, s := range shapes {
		n, np := s.N*s.C*s.H*s.W, s.N*s.H*s.W
		l := uniform(rng, n, 0, 1)
		r := append([]float32(nil), l...)
		for j := range r {
			r[j] = float32(math.Min(1, math.Max(0, float64(r[j])+0.1*rng.NormFloat64())))
		}
		dl, dr := uniform(rng, np, 0.02, 0.25), uniform(rng, np, 0.02, 0.25)
		safeDisparities(rng, dl, s.W, -1, 0.02, 0.25, margin)
		safeDisparities(rng, dr, s.W, +1, 0.02, 0.25, margin)
		spread(rng, dl, s.H, s.W, 0.02, 0.25, 0.004)
		spread(rng, dr, s.H, s.W, 0.02, 0.25, 0.004)
		safeDisparities(rng, dl, s.W, -1, 0.02, 0.25, margin)
		safeDisparities(rng, dr, s.W, +1, 0.02, 0.25, margin)
		out[i] = Scale{Left: l, Right: r, DispL: dl, DispR: dr, Shape: s}
	}
	return out
}

// TestObjectiveGradient checks every disparity gradient of the combined
// objective against central differences, with each option set.
func TestObjectiveGradient(t *testing.T) {
	rng := rand.New(rand.NewPCG(13, 14))
	shapes := []Shape{{N: 1, C: 3, H: 4, W: 8}, {N: 1, C: 3, H: 2, W: 4}}
	const step = 1.0 / 8192
	scales := randomScales(rng, shapes, 0.01)
	def := DefaultObjectiveOptions()
	clampL1 := def
	clampL1.Border, clampL1.Alpha, clampL1.RawSmoothness = warp.Clamp, TermOff, true
	for name, opts := range map[string]ObjectiveOptions{"default": def, "clamp, L1, raw smoothness": clampL1} {
		o := Objective{Options: &opts}
		grads := make([]DispGrad, len(scales))
		for i, sc := range scales {
			grads[i] = DispGrad{DispL: make([]float32, len(sc.DispL)), DispR: make([]float32, len(sc.DispR))}
		}
		o.Eval(nil, grads, scales)
		for i := range scales {
			for side, pair := range map[string][2][]float32{"L": {scales[i].DispL, grads[i].DispL}, "R": {scales[i].DispR, grads[i].DispR}} {
				orig := pair[0]
				f := func(x []float32) float64 {
					saved := append([]float32(nil), orig...)
					copy(orig, x)
					var oo Objective
					oo.Options = &opts
					v := oo.Eval(nil, nil, scales).Total
					copy(orig, saved)
					return v
				}
				gc := &GradCheckOptions{Step: step, AbsTol: 2e-4, RelTol: 2e-2}
				if _, err := CheckGradient(f, append([]float32(nil), orig...), pair[1], gc); err != nil {
					t.Errorf("%s: scale %d, d/dd%s: %v", name, i, side, err)
				}
			}
		}
	}
}

func TestObjectiveWeights(t *testing.T) {
	rng := rand.New(rand.NewPCG(15, 16))
	scales := randomScales(rng, []Shape{{N: 1, C: 3, H: 6, W: 8}, {N: 1, C: 3, H: 3, W: 4}}, 1e-3)
	var o Objective
	base := make([]Terms, 2)
	o.Eval(base, nil, scales)
	// Doubling a weight doubles its term only; TermOff switches it off.
	opts := DefaultObjectiveOptions()
	opts.Smoothness = 0.2
	opts.Consistency = TermOff
	o2 := Objective{Options: &opts}
	per := make([]Terms, 2)
	o2.Eval(per, nil, scales)
	for i := range per {
		closeValue(t, "appearance unchanged", per[i].Appearance, base[i].Appearance, 1e-12)
		closeValue(t, "smoothness doubled", per[i].Smoothness, 2*base[i].Smoothness, 1e-12)
		if per[i].Consistency != 0 {
			t.Errorf("scale %d: consistency %g with weight 0", i, per[i].Consistency)
		}
	}
	// Scale s's smoothness is 0.1/2^s/S times the term (S = 2 scales).
	var sm SmoothnessKernel
	raw := sm.Eval(nil, scales[1].DispL, scales[1].Left, scales[1].Shape, true) +
		sm.Eval(nil, scales[1].DispR, scales[1].Right, scales[1].Shape, true)
	closeValue(t, "scale-1 smoothness weight", base[1].Smoothness, 0.1/2/2*raw, 1e-12)
}

func TestObjectiveNoAllocations(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 18))
	scales := randomScales(rng, []Shape{{N: 1, C: 3, H: 8, W: 16}, {N: 1, C: 3, H: 4, W: 8}}, 1e-3)
	grads := make([]DispGrad, len(scales))
	for i, sc := range scales {
		grads[i] = DispGrad{DispL: make([]float32, len(sc.DispL)), DispR: make([]float32, len(sc.DispR))}
	}
	per := make([]Terms, len(scales))
	var o Objective
	o.Eval(per, grads, scales)
	if n := testing.AllocsPerRun(5, func() { o.Eval(per, grads, scales) }); n != 0 {
		t.Errorf("Objective.Eval allocates %v times per call in steady state", n)
	}
}

func TestDownsampleAndPyramid(t *testing.T) {
	// 2×2 area averages of a 1×1×3×5 ramp; the odd last row and column are
	// dropped (our documented choice). By hand: (0+1+5+6)/4 = 3,
	// (2+3+7+8)/4 = 5.
	src := make([]float32, 15)
	for i := range src {
		src[i] = float32(i)
	}
	dst := make([]float32, 2)
	Downsample2(dst, src, Shape{N: 1, C: 1, H: 3, W: 5})
	if dst[0] != 3 || dst[1] != 5 {
		t.Errorf("Downsample2 = %v, want [3 5]", dst)
	}
	im := planar.New(1, 3, 8, 12)
	for i := range im.Pix {
		im.Pix[i] = 0.5
	}
	levels, err := Pyramid(im, 3)
	if err != nil {
		t.Fatal(err)
	}
	if len(levels) != 3 || levels[0] != im || levels[2].H != 2 || levels[2].W != 3 || levels[2].C != 3 {
		t.Fatalf("pyramid shapes: %v", levels)
	}
	for _, v := range levels[2].Pix {
		if v != 0.5 {
			t.Fatalf("average of a constant is %v, want 0.5", v)
		}
	}
	if _, err := Pyramid(im, 5); err == nil {
		t.Error("Pyramid accepted 5 levels of an 8×12 image")
	}
}

// TestObjectiveOptionsConvention checks the options convention: nil, the
// zero value and DefaultObjectiveOptions give the same objective (a zero
// field means its default, so a non-nil value is not taken literally);
// TermOff and only TermOff switches a weight off; Validate names a bad field.
func TestObjectiveOptionsConvention(t *testing.T) {
	rng := rand.New(rand.NewPCG(17, 18))
	scales := randomScales(rng, []Shape{{N: 1, C: 3, H: 6, W: 8}, {N: 1, C: 3, H: 3, W: 4}}, 1e-3)
	eval := func(opts *ObjectiveOptions) Terms {
		o := Objective{Options: opts}
		return o.Eval(nil, nil, scales)
	}
	def := DefaultObjectiveOptions()
	want := eval(nil)
	if want.Appearance == 0 || want.Smoothness == 0 || want.Consistency == 0 {
		t.Fatalf("default terms %+v: every term should count", want)
	}
	for name, opts := range map[string]*ObjectiveOptions{
		"zero value":      {},
		"defaults":        &def,
		"zero smoothness": {Appearance: 1, Consistency: 1},
	} {
		if got := eval(opts); got != want {
			t.Errorf("%s: terms %+v, nil options give %+v", name, got, want)
		}
	}
	off := eval(&ObjectiveOptions{Smoothness: TermOff})
	if off.Smoothness != 0 || off.Appearance != want.Appearance || off.Consistency != want.Consistency {
		t.Errorf("smoothness TermOff: %+v, defaults %+v", off, want)
	}
	if l1 := eval(&ObjectiveOptions{Alpha: TermOff}); l1.Appearance == want.Appearance {
		t.Error("Alpha TermOff (L1 only) gives the default appearance term")
	}
	for _, tc := range []struct {
		opts ObjectiveOptions
		want string
	}{
		{ObjectiveOptions{Smoothness: -2}, "smoothness weight -2"},
		{ObjectiveOptions{Appearance: math.Inf(1)}, "appearance weight +Inf"},
		{ObjectiveOptions{Alpha: 1.5}, "alpha 1.5"},
		{ObjectiveOptions{Border: 7}, "border"},
	} {
		if err := tc.opts.Validate(); err == nil || !strings.HasPrefix(err.Error(), "loss: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("Validate(%+v) = %v, want an error naming %q", tc.opts, err, tc.want)
		}
	}
	var none *ObjectiveOptions
	if err := none.Validate(); err != nil {
		t.Errorf("nil options: %v", err)
	}
}
