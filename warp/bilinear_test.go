package warp

import (
	"fmt"
	"math"
	"testing"
)

// handCase is a 1×1×1×4 case small enough to check on paper. The source
// row is src = [1 2 4 8] (not a ramp, so that every tap shows in the
// result); gradDst is all ones, so gradSrc[i] is the sum of the weights
// that read src[i] and gradDisp[x] = dOut[x]/du · du/dd with du/dd = dir·W.
type handCase struct {
	name     string
	shift    float32 // d·W in pixels; d = shift/4 is exact in float32
	dir      Direction
	border   Border
	out      [4]float32
	mask     [4]float32
	gradSrc  [4]float32
	gradDisp [4]float32
}

var handSrc = []float32{1, 2, 4, 8}

// Worked by hand (arithmetic in the comments); nothing here comes from
// running the code.
var handCases = []handCase{
	// Half a pixel, RebuildLeft: u = x - 0.5 = -0.5, 0.5, 1.5, 2.5; a = 0.5.
	// out[0] = 0.5·src[-1] + 0.5·src[0] = 0.5·0 + 0.5·1 = 0.5 (Zero);
	// out[1] = 0.5·1 + 0.5·2 = 1.5; out[2] = 0.5·2 + 0.5·4 = 3;
	// out[3] = 0.5·4 + 0.5·8 = 6. Mask: u[0] < 0, so 0 1 1 1.
	// gradSrc: src[0] read with 0.5 by x=0 and x=1 → 1; src[1] by x=1, x=2
	// → 1; src[2] → 1; src[3] only by x=3 → 0.5.
	// gradDisp = -4·(right tap - left tap): -4·(1-0), -4·(2-1), -4·(4-2),
	// -4·(8-4) = -4, -4, -8, -16.
	{"half/left/zero", 0.5, RebuildLeft, Zero,
		[4]float32{0.5, 1.5, 3, 6}, [4]float32{0, 1, 1, 1},
		[4]float32{1, 1, 1, 0.5}, [4]float32{-4, -4, -8, -16}},
	// Clamp: u[0] = -0.5 clamps to 0, out[0] = src[0] = 1 with weight 1 on
	// src[0], so gradSrc[0] = 1 + 0.5 = 1.5, and the clamp holds, so
	// gradDisp[0] = 0. Other pixels as above.
	{"half/left/clamp", 0.5, RebuildLeft, Clamp,
		[4]float32{1, 1.5, 3, 6}, [4]float32{0, 1, 1, 1},
		[4]float32{1.5, 1, 1, 0.5}, [4]float32{0, -4, -8, -16}},
	// RebuildRight: u = x + 0.5 = 0.5, 1.5, 2.5, 3.5. out = 1.5, 3, 6 and
	// out[3] = 0.5·8 + 0.5·src[4] = 4 (Zero). Mask 1 1 1 0.
	// gradSrc: src[0] 0.5; src[1] 1; src[2] 1; src[3] 0.5 + 0.5 = 1.
	// gradDisp = +4·(right - left): 4·(2-1), 4·(4-2), 4·(8-4), 4·(0-8)
	// = 4, 8, 16, -32.
	{"half/right/zero", 0.5, RebuildRight, Zero,
		[4]float32{1.5, 3, 6, 4}, [4]float32{1, 1, 1, 0},
		[4]float32{0.5, 1, 1, 1}, [4]float32{4, 8, 16, -32}},
	// Clamp: u[3] = 3.5 clamps to 3, out[3] = 8, weight 1 on src[3]
	// (gradSrc[3] = 0.5 + 1 = 1.5), gradDisp[3] = 0.
	{"half/right/clamp", 0.5, RebuildRight, Clamp,
		[4]float32{1.5, 3, 6, 8}, [4]float32{1, 1, 1, 0},
		[4]float32{0.5, 1, 1, 1.5}, [4]float32{4, 8, 16, 0}},
	// 1.25 pixels, RebuildLeft: u = -1.25, -0.25, 0.75, 1.75; a = 0.75.
	// Zero: out[0] = 0 (both taps outside, u <= -1); out[1] = 0.75·src[0]
	// = 0.75; out[2] = 0.25·1 + 0.75·2 = 1.75; out[3] = 0.25·2 + 0.75·4 = 3.5.
	// Mask 0 0 1 1. gradSrc: src[0] 0.75 + 0.25 = 1; src[1] 0.75 + 0.25 = 1;
	// src[2] 0.75; src[3] 0. gradDisp: 0 (no tap inside); -4·(1-0) = -4;
	// -4·(2-1) = -4; -4·(4-2) = -8.
	{"1.25/left/zero", 1.25, RebuildLeft, Zero,
		[4]float32{0, 0.75, 1.75, 3.5}, [4]float32{0, 0, 1, 1},
		[4]float32{1, 1, 0.75, 0}, [4]float32{0, -4, -4, -8}},
	// Clamp: out[0] = out[1] = src[0] = 1 (clamped, gradDisp 0);
	// gradSrc[0] = 1 + 1 + 0.25 = 2.25, src[1] = 0.75 + 0.25 = 1, src[2] 0.75.
	{"1.25/left/clamp", 1.25, RebuildLeft, Clamp,
		[4]float32{1, 1, 1.75, 3.5}, [4]float32{0, 0, 1, 1},
		[4]float32{2.25, 1, 0.75, 0}, [4]float32{0, 0, -4, -8}},
	// Whole pixel, RebuildRight: u = 1, 2, 3, 4 (kinks). out = 2, 4, 8 and
	// out[3] = 0 (Zero, u = W: both taps outside) or 8 (Clamp). Mask
	// 1 1 1 0 (u = W-1 = 3 is inside). One-sided derivative on taps
	// floor(u), floor(u)+1: gradDisp = 4·(4-2), 4·(8-4), 4·(0-8) = 8, 16,
	// -32 and 0 at u = 4. Under Clamp u = 3 >= W-1 holds the clamp, so
	// gradDisp[2] = 0 (PyTorch's rule, see locate).
	{"1/right/zero", 1, RebuildRight, Zero,
		[4]float32{2, 4, 8, 0}, [4]float32{1, 1, 1, 0},
		[4]float32{0, 1, 1, 1}, [4]float32{8, 16, -32, 0}},
	{"1/right/clamp", 1, RebuildRight, Clamp,
		[4]float32{2, 4, 8, 8}, [4]float32{1, 1, 1, 0},
		[4]float32{0, 1, 1, 2}, [4]float32{8, 16, 0, 0}},
	// No shift: u = x, output = input, all valid. Zero: gradDisp =
	// -4·(src[x+1] - src[x]) = -4, -8, -16, and -4·(0-8) = 32 at x = 3.
	// Clamp: 0 at u = 0 and u = 3 (clamp holds), -8, -16 inside. These are
	// the values PyTorch 1.13.1 grid_sample gives for this very input
	// (a one-off /usr/bin/python3 run while writing this test); the same
	// rule is pinned on other inputs by the *_kinks fixtures of
	// TestGridSample.
	{"0/left/zero", 0, RebuildLeft, Zero,
		[4]float32{1, 2, 4, 8}, [4]float32{1, 1, 1, 1},
		[4]float32{1, 1, 1, 1}, [4]float32{-4, -8, -16, 32}},
	{"0/left/clamp", 0, RebuildLeft, Clamp,
		[4]float32{1, 2, 4, 8}, [4]float32{1, 1, 1, 1},
		[4]float32{1, 1, 1, 1}, [4]float32{0, -8, -16, 0}},
}

func TestHandCases(t *testing.T) {
	s := Shape{N: 1, C: 1, H: 1, W: 4}
	for _, tc := range handCases {
		t.Run(tc.name, func(t *testing.T) {
			disp := []float32{tc.shift / 4, tc.shift / 4, tc.shift / 4, tc.shift / 4}
			dst := make([]float32, 4)
			mask := make([]float32, 4)
			Forward(dst, mask, handSrc, disp, s, tc.dir, tc.border)
			gradSrc := []float32{9, 9, 9, 9} // overwritten, not accumulated
			gradDisp := []float32{9, 9, 9, 9}
			Backward(gradSrc, gradDisp, []float32{1, 1, 1, 1}, handSrc, disp, s, tc.dir, tc.border)
			// The arithmetic is exact in float32 (dyadic values), hence
			// the tight tolerance.
			const tol = 1e-6
			for _, chk := range []struct {
				what      string
				got, want []float32
			}{
				{"out", dst, tc.out[:]},
				{"mask", mask, tc.mask[:]},
				{"gradSrc", gradSrc, tc.gradSrc[:]},
				{"gradDisp", gradDisp, tc.gradDisp[:]},
			} {
				for i := range chk.want {
					if math.Abs(float64(chk.got[i]-chk.want[i])) > tol {
						t.Errorf("%s = %v, want %v (worked by hand)", chk.what, chk.got, chk.want)
						break
					}
				}
			}
		})
	}
}

// TestWidthOne checks the degenerate one-column row: every sample is the
// single pixel under Clamp (mask 1 only at u = 0), and under Zero the
// fading weight 1-|u| for |u| < 1.
func TestWidthOne(t *testing.T) {
	s := Shape{N: 1, C: 1, H: 1, W: 1}
	src := []float32{4}
	for _, tc := range []struct {
		d      float32
		b      Border
		out    float32
		mask   float32
		gdisp  float32
		gradIm float32
	}{
		// Clamp: u = -0.25 → 0; weight 1; no disparity gradient.
		{0.25, Clamp, 4, 0, 0, 1},
		{0, Clamp, 4, 1, 0, 1},
		// Zero: u = -0.25, taps -1 (outside) and 0 with a = 0.75:
		// out = 0.75·4 = 3; dOut/du = src[0] - 0 = 4; du/dd = -1 → -4.
		{0.25, Zero, 3, 0, -4, 0.75},
		// u = 0: taps 0 and 1 (outside), a = 0: out = 4, dOut/du = 0-4,
		// du/dd = -1 → 4.
		{0, Zero, 4, 1, 4, 1},
		{2, Zero, 0, 0, 0, 0}, // u = -2: both taps outside
	} {
		dst, mask := []float32{7}, []float32{7}
		Forward(dst, mask, src, []float32{tc.d}, s, RebuildLeft, tc.b)
		gs, gd := []float32{7}, []float32{7}
		Backward(gs, gd, []float32{1}, src, []float32{tc.d}, s, RebuildLeft, tc.b)
		if dst[0] != tc.out || mask[0] != tc.mask || gd[0] != tc.gdisp || gs[0] != tc.gradIm {
			t.Errorf("W=1 d=%v %v: out, mask, gradDisp, gradSrc = %v %v %v %v, want %v %v %v %v (worked by hand)",
				tc.d, tc.b, dst[0], mask[0], gd[0], gs[0], tc.out, tc.mask, tc.gdisp, tc.gradIm)
		}
	}
}

// TestNonFiniteDisparity pins what the kernels do with values Warp rejects
// (doc.go): NaN gives 0 and no gradient; ±Inf is far outside the row.
func TestNonFiniteDisparity(t *testing.T) {
	s := Shape{N: 1, C: 1, H: 1, W: 4}
	nan, inf := float32(math.NaN()), float32(math.Inf(1))
	disp := []float32{nan, inf, -inf, nan}
	for _, tc := range []struct {
		b   Border
		out []float32
	}{
		{Zero, []float32{0, 0, 0, 0}},
		// RebuildLeft: u = x - d·W; d = +Inf → u = -Inf → src[0]; d = -Inf
		// → u = +Inf → src[3].
		{Clamp, []float32{0, 1, 8, 0}},
	} {
		dst, mask := make([]float32, 4), make([]float32, 4)
		Forward(dst, mask, handSrc, disp, s, RebuildLeft, tc.b)
		gs, gd := make([]float32, 4), make([]float32, 4)
		Backward(gs, gd, []float32{1, 1, 1, 1}, handSrc, disp, s, RebuildLeft, tc.b)
		if fmt.Sprint(dst) != fmt.Sprint(tc.out) || fmt.Sprint(mask) != "[0 0 0 0]" || fmt.Sprint(gd) != "[0 0 0 0]" {
			t.Errorf("%v: out %v mask %v gradDisp %v, want out %v, mask and gradDisp 0", tc.b, dst, mask, gd, tc.out)
		}
	}
}

// TestKernelPanics checks the documented panics for a programmer's misuse.
func TestKernelPanics(t *testing.T) {
	s := Shape{N: 1, C: 2, H: 2, W: 3}
	img := func() []float32 { return make([]float32, 12) }
	pl := func() []float32 { return make([]float32, 6) }
	src := img()
	for _, tc := range []struct {
		name string
		f    func()
	}{
		{"short dst", func() { Forward(make([]float32, 11), nil, src, pl(), s, RebuildLeft, Zero) }},
		{"short disp", func() { Forward(img(), nil, src, make([]float32, 5), s, RebuildLeft, Zero) }},
		{"short mask", func() { Forward(img(), make([]float32, 5), src, pl(), s, RebuildLeft, Zero) }},
		{"nil dst", func() { Forward(nil, nil, src, pl(), s, RebuildLeft, Zero) }},
		{"alias", func() { Forward(src, nil, src, pl(), s, RebuildLeft, Zero) }},
		{"bad shape", func() { Forward(nil, nil, nil, nil, Shape{}, RebuildLeft, Zero) }},
		{"bad dir", func() { Forward(img(), nil, src, pl(), s, 0, Zero) }},
		{"bad border", func() { Forward(img(), nil, src, pl(), s, RebuildLeft, 2) }},
		{"short gradSrc", func() { Backward(make([]float32, 13), nil, img(), src, pl(), s, RebuildLeft, Zero) }},
		{"short gradDisp", func() { Backward(nil, make([]float32, 7), img(), src, pl(), s, RebuildLeft, Zero) }},
		{"gradSrc aliases gradDst", func() { g := img(); Backward(g, nil, g, src, pl(), s, RebuildLeft, Zero) }},
		{"gradDisp aliases disp", func() { d := pl(); Backward(nil, d, img(), src, d, s, RebuildLeft, Zero) }},
		{"Backward bad dir", func() { Backward(nil, nil, img(), src, pl(), s, 3, Zero) }},
	} {
		func() {
			defer func() {
				r := recover()
				if r == nil {
					t.Errorf("%s: no panic", tc.name)
					return
				}
				if msg := fmt.Sprint(r); len(msg) < 5 || msg[:5] != "warp." {
					t.Errorf("%s: panic %q does not name the package", tc.name, msg)
				}
			}()
			tc.f()
		}()
	}
}
