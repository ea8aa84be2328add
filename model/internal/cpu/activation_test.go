package cpu

import (
	"fmt"
	"math"
	"testing"
)

// activationPaths runs f with the Go loops and, where the CPU has them,
// with the SIMD loops (AVX2 or ASIMD).
func activationPaths(t *testing.T, f func(t *testing.T)) {
	saved := activationSIMD
	defer func() { activationSIMD = saved }()
	activationSIMD = false
	t.Run("go", f)
	if saved {
		activationSIMD = true
		t.Run("simd", f)
	}
}

func TestActivationsAgainstTorch(t *testing.T) {
	activationPaths(t, testActivationsAgainstTorch)
}

func testActivationsAgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "activation.json") {
		name := c.Op + " " + c.Input
		y := make([]float32, len(c.X))
		gx := make([]float32, len(c.X))
		// Reference: PyTorch 1.13.1 (Debian python3-torch) F.elu(alpha=1),
		// torch.sigmoid and 0.3·torch.sigmoid, gradients by autograd. PyTorch
		// differentiates ELU and sigmoid from their outputs too. Tolerances: a few
		// float32 ulps of the result (the exponentials differ in their last bits),
		// plus 1e-7 absolute for values near 0.
		switch c.Op {
		case "elu":
			ELU(y, c.X)
			ELUBackward(gx, c.Gy, y)
		case "sigmoid":
			Sigmoid(y, c.X)
			SigmoidBackward(gx, c.Gy, y)
		case "scaled_sigmoid":
			SigmoidScale(y, c.X, c.Scale)
			SigmoidScaleBackward(gx, c.Gy, y, c.Scale)
		default:
			t.Fatalf("unknown op %q in activation.json", c.Op)
		}
		opsClose(t, name+" forward", y, c.Y, 1e-7, 3e-7)
		opsClose(t, name+" backward", gx, c.Gx, 1e-7, 1e-6)

		// In place must give the same values.
		inPlace := append([]float32(nil), c.X...)
		g := append([]float32(nil), c.Gy...)
		switch c.Op {
		case "elu":
			ELU(inPlace, inPlace)
			ELUBackward(g, g, inPlace)
		case "sigmoid":
			Sigmoid(inPlace, inPlace)
			SigmoidBackward(g, g, inPlace)
		case "scaled_sigmoid":
			SigmoidScale(inPlace, inPlace, c.Scale)
			SigmoidScaleBackward(g, g, inPlace, c.Scale)
		}
		opsClose(t, name+" in place forward", inPlace, y, 0, 0)
		opsClose(t, name+" in place backward", g, gx, 0, 0)
	}
}

// TestExpNonPosAccuracy sweeps the exponentials over their whole domain
// and compares them with the standard library's float64 math.Exp and
// math.Expm1 (Go 1.26), rounded to float32.
func TestExpNonPosAccuracy(t *testing.T) {
	const steps = 1 << 20
	var worstExp, worstExpm1 float64
	for i := 0; i <= steps; i++ {
		x := float32(expMinArg * float64(i) / steps)
		e := float64(expNonPos(x))
		want := math.Exp(float64(x))
		worstExp = max(worstExp, math.Abs(e-want)/want)
		m := float64(expm1NonPos(x))
		wantM := math.Expm1(float64(x))
		if wantM != 0 {
			worstExpm1 = max(worstExpm1, math.Abs(m-wantM)/math.Abs(wantM))
		} else if m != 0 {
			t.Fatalf("expm1NonPos(0) = %v, want 0", m)
		}
	}
	// 2 ulp of float32 is 2^-22 ≈ 2.4e-7 relative.
	if worstExp > 0x1p-22 {
		t.Errorf("expNonPos: worst relative error %.3g, want <= 2^-22", worstExp)
	}
	if worstExpm1 > 0x1p-22 {
		t.Errorf("expm1NonPos: worst relative error %.3g, want <= 2^-22", worstExpm1)
	}
	t.Logf("worst relative error: exp %.3g, expm1 %.3g (float32 ulp at 1: %.3g)", worstExp, worstExpm1, 0x1p-23)
	// Tiny arguments: e^x − 1 must keep x's digits, not round to a multiple
	// of 2^-24 as e^x − 1 computed naively would.
	for _, x := range []float32{-1e-8, -1e-20, -0x1p-126} {
		if got := expm1NonPos(x); got != x {
			t.Errorf("expm1NonPos(%g) = %g, want %g", x, got, x)
		}
	}
	if got := expNonPos(-200); got != 0 {
		t.Errorf("expNonPos(-200) = %g, want 0", got)
	}
	if got := expm1NonPos(-200); got != -1 {
		t.Errorf("expm1NonPos(-200) = %g, want -1", got)
	}
}

// TestActivationsSIMDMatchesGo compares the two loops over every length up
// to 40 (the SIMD body and the Go tail) and a wide range of values.
func TestActivationsSIMDMatchesGo(t *testing.T) {
	if !activationSIMD {
		t.Skip("no SIMD loops on this CPU or build")
	}
	defer func() { activationSIMD = true }()
	x := opsRandom(1<<16, 30, 15)
	copy(x, []float32{0, float32(math.Copysign(0, -1)), -87, -87.01, -86.99, -1e-30, 1e-30, -200, 200,
		float32(math.NaN()), float32(math.Inf(1)), float32(math.Inf(-1)), -0.3466, -0.3467})
	run := func(avx bool, f func(y, x []float32)) []float32 {
		activationSIMD = avx
		y := make([]float32, len(x))
		for n := 0; n <= 40; n++ {
			f(y[:n], x[:n])
		}
		f(y[40:], x[40:])
		return y
	}
	for _, k := range []struct {
		name string
		f    func(y, x []float32)
	}{
		{"ELU", ELU},
		{"ELUBackward", func(y, x []float32) { ELUBackward(y, x[len(x)-len(y):], x) }},
		{"Sigmoid", Sigmoid},
		{"SigmoidScale", func(y, x []float32) { SigmoidScale(y, x, 0.3) }},
	} {
		g, a := run(false, k.f), run(true, k.f)
		// The loops differ only by fused multiply-adds: within 2 float32 ulps
		// (2^-22 relative) of each other, or 1e-38 absolute near zero.
		for i := range g {
			if g[i] == a[i] {
				continue
			}
			if math.IsNaN(float64(g[i])) != math.IsNaN(float64(a[i])) ||
				(!math.IsNaN(float64(g[i])) && !(math.Abs(float64(g[i]-a[i])) <= 0x1p-22*math.Abs(float64(g[i]))+1e-38)) {
				t.Fatalf("%s(%v): Go %v, SIMD %v", k.name, x[i], g[i], a[i])
			}
		}
	}
}

func TestActivationsNonFinite(t *testing.T) { activationPaths(t, testActivationsNonFinite) }

func testActivationsNonFinite(t *testing.T) {
	// IEEE semantics (common practice): ELU(+Inf) = +Inf, ELU(−Inf) = −1,
	// sigmoid(±Inf) = 1 or 0, NaN stays NaN.
	nan := float32(math.NaN())
	inf := float32(math.Inf(1))
	x := []float32{nan, inf, -inf}
	y := make([]float32, 3)
	ELU(y, x)
	if !math.IsNaN(float64(y[0])) || y[1] != inf || y[2] != -1 {
		t.Errorf("ELU(NaN, +Inf, −Inf) = %v", y)
	}
	Sigmoid(y, x)
	if !math.IsNaN(float64(y[0])) || y[1] != 1 || y[2] != 0 {
		t.Errorf("Sigmoid(NaN, +Inf, −Inf) = %v", y)
	}
}

func TestActivationsFiniteDifferences(t *testing.T) {
	x := opsRandom(60, 3, 11)
	gy := opsRandom(60, 1, 12)
	y := make([]float32, 60)
	g := make([]float32, 60)
	ELU(y, x)
	ELUBackward(g, gy, y)
	opsCheckGradient(t, "ELU", x, gy, g, ELU, 60, 1e-3, 2e-3)
	Sigmoid(y, x)
	SigmoidBackward(g, gy, y)
	opsCheckGradient(t, "Sigmoid", x, gy, g, Sigmoid, 60, 1e-3, 2e-3)
	const dmax = 0.25
	SigmoidScale(y, x, dmax)
	SigmoidScaleBackward(g, gy, y, dmax)
	opsCheckGradient(t, "SigmoidScale", x, gy, g, func(y, x []float32) { SigmoidScale(y, x, dmax) }, 60, 1e-3, 2e-3)
	// A scale of 0 makes the output constant: the gradient is 0, not NaN.
	SigmoidScale(y, x, 0)
	SigmoidScaleBackward(g, gy, y, 0)
	for i, v := range g {
		if v != 0 {
			t.Fatalf("SigmoidScaleBackward with scale 0: g[%d] = %v, want 0", i, v)
		}
	}
}

// TestActivationsLarge splits over cores and compares with float64
// formulas (the textbook definitions, common practice).
func TestActivationsLarge(t *testing.T) { activationPaths(t, testActivationsLarge) }

func testActivationsLarge(t *testing.T) {
	const n = 1<<18 + 5
	x := opsRandom(n, 4, 13)
	gy := opsRandom(n, 1, 14)
	y := make([]float32, n)
	g := make([]float32, n)
	SigmoidScale(y, x, 0.3)
	SigmoidScaleBackward(g, gy, y, 0.3)
	for i, v := range x {
		s := 1 / (1 + math.Exp(-float64(v)))
		if d := math.Abs(float64(y[i]) - 0.3*s); d > 1e-7 {
			t.Fatalf("SigmoidScale[%d] = %v, want %v", i, y[i], 0.3*s)
		}
		if d := math.Abs(float64(g[i]) - float64(gy[i])*0.3*s*(1-s)); d > 1e-7 {
			t.Fatalf("SigmoidScaleBackward[%d] = %v, want %v", i, g[i], float64(gy[i])*0.3*s*(1-s))
		}
	}
	ELU(y, x)
	for i, v := range x {
		want := float64(v)
		if v <= 0 {
			want = math.Expm1(want)
		}
		if d := math.Abs(float64(y[i]) - want); d > 2.5e-7*math.Max(1, math.Abs(want)) {
			t.Fatalf("ELU[%d] = %v, want %v", i, y[i], want)
		}
	}
}

func TestActivationsNoAlloc(t *testing.T) {
	for _, n := range []int{17, 32 * 64 * 128} {
		x := make([]float32, n)
		y := make([]float32, n)
		g := make([]float32, n)
		name := fmt.Sprint(n)
		opsNoAlloc(t, "ELU "+name, func() { ELU(y, x) })
		opsNoAlloc(t, "ELUBackward "+name, func() { ELUBackward(g, x, y) })
		opsNoAlloc(t, "Sigmoid "+name, func() { Sigmoid(y, x) })
		opsNoAlloc(t, "SigmoidBackward "+name, func() { SigmoidBackward(g, x, y) })
		opsNoAlloc(t, "SigmoidScale "+name, func() { SigmoidScale(y, x, 0.3) })
		opsNoAlloc(t, "SigmoidScaleBackward "+name, func() { SigmoidScaleBackward(g, x, y, 0.3) })
	}
}

func TestActivationsPanicOnMisuse(t *testing.T) {
	opsMustPanic(t, "ELU", func() { ELU(make([]float32, 3), make([]float32, 4)) })
	opsMustPanic(t, "ELUBackward", func() { ELUBackward(make([]float32, 3), make([]float32, 3), make([]float32, 2)) })
	opsMustPanic(t, "Sigmoid", func() { Sigmoid(make([]float32, 3), nil) })
	opsMustPanic(t, "SigmoidScaleBackward", func() {
		SigmoidScaleBackward(make([]float32, 3), make([]float32, 4), make([]float32, 3), 0)
	})
}

func BenchmarkActivation(b *testing.B) {
	for _, s := range opsBenchSizes {
		n := s.c * s.h * s.w
		x := opsRandom(n, 3, 1)
		y := make([]float32, n)
		g := make([]float32, n)
		for _, k := range []struct {
			name  string
			bytes int
			fn    func()
		}{
			{"ELU", 8 * n, func() { ELU(y, x) }},
			{"ELUInPlace", 8 * n, func() { ELU(g, g) }},
			{"ELUBackward", 12 * n, func() { ELUBackward(g, x, y) }},
			{"Sigmoid", 8 * n, func() { Sigmoid(y, x) }},
			{"SigmoidBackward", 12 * n, func() { SigmoidBackward(g, x, y) }},
			{"SigmoidScale", 8 * n, func() { SigmoidScale(y, x, 0.3) }},
		} {
			b.Run(fmt.Sprintf("%s/%dx%dx%d", k.name, s.c, s.h, s.w), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					k.fn()
				}
				opsReportGBs(b, k.bytes)
			})
		}
	}
}
