package cpu

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
)

// Shared helpers of the operator tests (upsample, concat, activation, bias,
// elementwise).

// opsFixture is one file written by testdata/cpu/ops/gen.py: reference
// values from PyTorch 1.13.1 (Debian python3-torch 1.13.1+dfsg, which
// reports its version as 1.13.0a0), CPU float32, gradients by autograd.
type opsFixture struct {
	Source string           `json:"source"`
	Cases  []opsFixtureCase `json:"cases"`
}

type opsFixtureCase struct {
	Op    string      `json:"op"`
	Input string      `json:"input"`
	Shape []int       `json:"shape"`
	Chans []int       `json:"chans"`
	Scale float32     `json:"scale"`
	Shift float32     `json:"shift"`
	X     []float32   `json:"x"`
	A     []float32   `json:"a"`
	B     []float32   `json:"b"`
	Xs    [][]float32 `json:"xs"`
	Bias  []float32   `json:"bias"`
	Y     []float32   `json:"y"`
	Gy    []float32   `json:"gy"`
	Gx    []float32   `json:"gx"`
	Ga    []float32   `json:"ga"`
	Gb    []float32   `json:"gb"`
	Gxs   [][]float32 `json:"gxs"`
	Gbias []float32   `json:"gbias"`
}

func (c *opsFixtureCase) nchw() (n, ch, h, w int) {
	return c.Shape[0], c.Shape[1], c.Shape[2], c.Shape[3]
}

// loadOpsFixture reads testdata/cpu/ops/name and checks it is not empty.
func loadOpsFixture(t *testing.T, name string) []opsFixtureCase {
	t.Helper()
	path := filepath.Join("..", "..", "..", "testdata", "cpu", "ops", name)
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("reading fixture: %v (regenerate with /usr/bin/python3 testdata/cpu/ops/gen.py)", err)
	}
	var f opsFixture
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if len(f.Cases) == 0 {
		t.Fatalf("%s has no cases", path)
	}
	return f.Cases
}

// opsClose fails the test at the first element where got and want differ by
// more than atol + rtol·|want|. NaN must match NaN, and infinities must be
// equal.
func opsClose(t *testing.T, what string, got, want []float32, atol, rtol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", what, len(got), len(want))
	}
	for i := range want {
		g, w := float64(got[i]), float64(want[i])
		if math.IsNaN(w) || math.IsInf(w, 0) {
			if !(math.IsNaN(w) && math.IsNaN(g)) && g != w {
				t.Fatalf("%s[%d] = %v, want %v", what, i, g, w)
			}
			continue
		}
		if !(math.Abs(g-w) <= atol+rtol*math.Abs(w)) {
			t.Fatalf("%s[%d] = %v, want %v (|diff| %.3g > %.3g + %.3g·|want|)", what, i, g, w, math.Abs(g-w), atol, rtol)
		}
	}
}

// opsRandom returns n values, normally distributed with the given scale,
// from a generator seeded with seed.
func opsRandom(n int, scale float64, seed uint64) []float32 {
	r := rand.New(rand.NewPCG(seed, 0x6f7073))
	s := make([]float32, n)
	for i := range s {
		s[i] = float32(r.NormFloat64() * scale)
	}
	return s
}

// opsCheckGradient compares a backward pass with central differences (gonum
// diff/fd, gonum.org/v1/gonum v0.17.0) of the scalar f(x) = Σ gy·forward(x),
// evaluated in float64 over the float32 forward. grad is the backward
// pass's gradient with respect to x for the upstream gradient gy.
func opsCheckGradient(t *testing.T, what string, x, gy, grad []float32, forward func(y, x []float32), ny int, step, atol float64) {
	t.Helper()
	y := make([]float32, ny)
	x32 := make([]float32, len(x))
	f := func(xs []float64) float64 {
		for i, v := range xs {
			x32[i] = float32(v)
		}
		forward(y, x32)
		var s float64
		for i, v := range y {
			s += float64(gy[i]) * float64(v)
		}
		return s
	}
	x64 := make([]float64, len(x))
	for i, v := range x {
		x64[i] = float64(v)
	}
	num := fd.Gradient(nil, f, x64, &fd.Settings{Formula: fd.Central, Step: step})
	for i := range num {
		if d := math.Abs(num[i] - float64(grad[i])); !(d <= atol) {
			t.Fatalf("%s: gradient[%d] = %v, central difference %v (|diff| %.3g > %.3g)", what, i, grad[i], num[i], d, atol)
		}
	}
}

// opsNoAlloc fails if fn allocates in steady state.
func opsNoAlloc(t *testing.T, what string, fn func()) {
	t.Helper()
	fn() // warm the task pool and the worker goroutines
	if opsRace {
		return // allocation counts are not kept under -race (see DEVELOPERS.md)
	}
	if a := testing.AllocsPerRun(20, fn); a != 0 {
		t.Errorf("%s allocated %v times per call, want 0", what, a)
	}
}

// opsMustPanic fails unless fn panics.
func opsMustPanic(t *testing.T, what string, fn func()) {
	t.Helper()
	defer func() {
		if recover() == nil {
			t.Errorf("%s did not panic", what)
		}
	}()
	fn()
}

// opsBenchSizes are decoder-sized activations (C, H, W) with N = 1.
var opsBenchSizes = []struct{ c, h, w int }{
	{32, 64, 128},
	{16, 128, 256},
	{64, 32, 64},
}

// opsReportGBs reports the memory traffic of one call (bytes read plus
// written) per second.
func opsReportGBs(b *testing.B, bytes int) {
	b.ReportMetric(float64(bytes)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GB/s")
}
