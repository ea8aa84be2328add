package loss

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// TestDownsample2Torch compares Downsample2 with PyTorch 1.13's
// torch.nn.functional.avg_pool2d(x, kernel_size=2, stride=2) on a 2×3×7×10
// input (testdata/loss/downsample_torch.json, gen_downsample.py; numpy
// 1.24.2): bit for bit with its float32 result, which sums the four values
// in the same order and divides by 4, and to 2⁻²³ with its float64 one
// (three float32 roundings of sums below 4). The odd last row is dropped in
// both.
func TestDownsample2Torch(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "testdata", "loss", "downsample_torch.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		Shape                   []int
		OutShape                []int `json:"out_shape"`
		Input, Float32, Float64 []float64
	}
	if err := json.Unmarshal(b, &fx); err != nil {
		t.Fatal(err)
	}
	if len(fx.Shape) != 4 {
		t.Fatalf("shape %v", fx.Shape)
	}
	s := Shape{N: fx.Shape[0], C: fx.Shape[1], H: fx.Shape[2], W: fx.Shape[3]}
	if len(fx.OutShape) != 4 || fx.OutShape[2] != s.H/2 || fx.OutShape[3] != s.W/2 {
		t.Fatalf("PyTorch's output shape %v for %+v, want H/2, W/2 rounded down", fx.OutShape, s)
	}
	n := s.N * s.C * (s.H / 2) * (s.W / 2)
	if len(fx.Input) != s.N*s.C*s.H*s.W || len(fx.Float32) != n || len(fx.Float64) != n {
		t.Fatalf("fixture lengths %d, %d, %d", len(fx.Input), len(fx.Float32), len(fx.Float64))
	}
	src := make([]float32, len(fx.Input))
	for i, v := range fx.Input {
		src[i] = float32(v)
	}
	dst := make([]float32, n)
	Downsample2(dst, src, s)
	worst := 0.0
	for i := range dst {
		if dst[i] != float32(fx.Float32[i]) {
			t.Errorf("value %d: %v, PyTorch float32 %v", i, dst[i], float32(fx.Float32[i]))
		}
		worst = math.Max(worst, math.Abs(float64(dst[i])-fx.Float64[i]))
	}
	if worst > 0x1p-23 {
		t.Errorf("max |Downsample2 − float64 avg_pool2d| = %g, want ≤ 2⁻²³", worst)
	}
	t.Logf("max |Downsample2 − float64 avg_pool2d| = %.3g", worst)
}
