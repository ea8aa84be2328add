package cpu

import (
	"fmt"
	"math"
	"testing"
)

func TestElementwiseAgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "elementwise.json") {
		switch c.Op {
		case "add":
			y := make([]float32, len(c.A))
			Add(y, c.A, c.B)
			// Reference: PyTorch 1.13.1 (Debian python3-torch) a + b, autograd: one
			// rounding, exact agreement; both gradients are the upstream gradient.
			opsClose(t, "add forward", y, c.Y, 0, 0)
			opsClose(t, "add gradient a", c.Ga, c.Gy, 0, 0)
			opsClose(t, "add gradient b", c.Gb, c.Gy, 0, 0)
			acc := append([]float32(nil), c.A...)
			Add(acc, acc, c.B)
			opsClose(t, "add in place", acc, c.Y, 0, 0)
		case "mul_add":
			y := make([]float32, len(c.X))
			gx := make([]float32, len(c.X))
			ScaleShift(y, c.X, c.Scale, c.Shift)
			ScaleShift(gx, c.Gy, c.Scale, 0)
			// Reference: PyTorch 1.13.1 (Debian python3-torch) 0.75·x − 1.5 and
			// autograd. PyTorch rounds the product and then the sum; a compiler
			// that fuses them (arm64) rounds once. The two results differ by at
			// most the product's rounding plus the sum's, 2^-24·|0.75·x| +
			// 2^-23·|y|, which can be 2 ulps of y where the shift cancels most
			// of the product. The backward pass is one product: exact.
			for i, v := range y {
				tol := 0x1p-24*math.Abs(float64(c.Scale)*float64(c.X[i])) + 0x1p-23*math.Abs(float64(c.Y[i]))
				if d := math.Abs(float64(v) - float64(c.Y[i])); d > tol {
					t.Errorf("scale-shift forward[%d] = %v, want %v (|diff| %.3g > %.3g, one fused rounding)", i, v, c.Y[i], d, tol)
				}
			}
			opsClose(t, "scale-shift backward", gx, c.Gx, 0, 0)
		default:
			t.Fatalf("unknown op %q in elementwise.json", c.Op)
		}
	}
}

func TestElementwiseLarge(t *testing.T) {
	const n = 1<<18 + 3
	a := opsRandom(n, 1, 51)
	b := opsRandom(n, 1, 52)
	y := make([]float32, n)
	Add(y, a, b)
	for i := range y {
		if y[i] != a[i]+b[i] {
			t.Fatalf("Add[%d] = %v, want %v", i, y[i], a[i]+b[i])
		}
	}
	ScaleShift(y, a, 2, -1)
	for i := range y {
		if want := 2*a[i] - 1; y[i] != want {
			t.Fatalf("ScaleShift[%d] = %v, want %v", i, y[i], want)
		}
	}
}

func TestElementwiseNoAlloc(t *testing.T) {
	for _, n := range []int{5, 1 << 18} {
		a := make([]float32, n)
		b := make([]float32, n)
		opsNoAlloc(t, fmt.Sprint("Add ", n), func() { Add(a, a, b) })
		opsNoAlloc(t, fmt.Sprint("ScaleShift ", n), func() { ScaleShift(a, b, 2, 1) })
	}
}

func TestElementwisePanicsOnMisuse(t *testing.T) {
	opsMustPanic(t, "Add", func() { Add(make([]float32, 3), make([]float32, 3), make([]float32, 2)) })
	opsMustPanic(t, "ScaleShift", func() { ScaleShift(make([]float32, 3), make([]float32, 4), 1, 0) })
}

func BenchmarkElementwise(b *testing.B) {
	for _, s := range opsBenchSizes {
		n := s.c * s.h * s.w
		x := make([]float32, n)
		y := make([]float32, n)
		b.Run(fmt.Sprintf("AddInPlace/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				Add(y, y, x)
			}
			opsReportGBs(b, 12*n)
		})
		b.Run(fmt.Sprintf("ScaleShift/%dx%dx%d", s.c, s.h, s.w), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				ScaleShift(y, x, 2, 1)
			}
			opsReportGBs(b, 8*n)
		})
	}
}
