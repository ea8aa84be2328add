package model

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// TestResizeBilinearOpenCV checks resizeBilinear against OpenCV 4.6.0
// cv2.resize (INTER_LINEAR, float32), which uses the same pixel centres
// and border clamp; the fixture and its script are in testdata/infer
// (gen_resize.py). Up- and downscaling, one axis only, and 1×1.
func TestResizeBilinearOpenCV(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "testdata", "infer", "resize_cv2.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Source string
		SW, SH int
		Src    []float32
		Cases  []struct {
			DW, DH int
			Dst    []float32
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) == 0 || len(ref.Src) != ref.SW*ref.SH {
		t.Fatalf("fixture has %d cases, %d source values", len(ref.Cases), len(ref.Src))
	}
	for _, c := range ref.Cases {
		got := make([]float32, c.DW*c.DH)
		resizeBilinear(got, ref.Src, ref.SW, ref.SH, c.DW, c.DH)
		for i, want := range c.Dst {
			// OpenCV computes its float weights in another order: a few
			// float32 roundings apart.
			if d := math.Abs(float64(got[i] - want)); d > 2e-6 {
				t.Errorf("%dx%d → %dx%d, pixel (%d, %d): %v, %s gives %v", ref.SW, ref.SH, c.DW, c.DH, i%c.DW, i/c.DW, got[i], ref.Source, want)
				break
			}
		}
	}
}
