package model

import (
	"encoding/json"
	"math"
	"math/rand/v2"
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

// TestFlipBlend checks the support rule by hand on one row of 10 pixels:
// orig says 1 px everywhere, mirrored 3 px. orig's columns 0–2 map left of
// the right view by mirrored's 3 px (x − 3 < 0), so they take mirrored;
// mirrored's column 9 maps outside by orig's 1 px (9 + 1 > 9), so it takes
// orig; columns 3 and 8 sit exactly on the edge (u = 0 and u = 9, inside, as
// in package warp) and are averaged like the rest.
func TestFlipBlend(t *testing.T) {
	const h, w = 2, 10
	orig, mirr, dst := make([]float32, h*w), make([]float32, h*w), make([]float32, h*w)
	for i := range orig {
		orig[i], mirr[i] = 0.1, 0.3
	}
	FlipBlend(dst, orig, mirr, h, w)
	for y := range h {
		for x := range w {
			want := float32(0.2)
			switch {
			case x <= 2:
				want = 0.3
			case x == 9:
				want = 0.1
			}
			if got := dst[y*w+x]; math.Abs(float64(got-want)) > 1e-7 {
				t.Errorf("row %d column %d: %v, want %v", y, x, got, want)
			}
		}
	}
	// Disparities wider than the image: neither has support anywhere, and
	// every pixel is the mean.
	for i := range orig {
		orig[i], mirr[i] = 1.2, 1.1
	}
	FlipBlend(dst, orig, mirr, h, w)
	for i, v := range dst {
		if math.Abs(float64(v)-1.15) > 1e-6 {
			t.Fatalf("both blind, pixel %d: %v, want 1.15", i, v)
		}
	}
	// In place, agreeing predictions stay.
	copy(mirr, orig)
	FlipBlend(orig, orig, mirr, h, w)
	for i, v := range orig {
		if v != 1.2 {
			t.Fatalf("agreeing predictions changed at %d: %v", i, v)
		}
	}
}

// TestFlipBlendMirror checks that the blend commutes with mirroring: for a
// mirrored input the two predictions swap roles, so blending the mirrored
// predictions gives the mirrored blend, bit for bit.
func TestFlipBlendMirror(t *testing.T) {
	const h, w = 3, 37
	rng := rand.New(rand.NewPCG(4, 5))
	orig, mirr := make([]float32, h*w), make([]float32, h*w)
	for i := range orig {
		orig[i], mirr[i] = 0.3*rng.Float32(), 0.3*rng.Float32()
	}
	dst, mdst := make([]float32, h*w), make([]float32, h*w)
	FlipBlend(dst, orig, mirr, h, w)
	mo, mm := make([]float32, h*w), make([]float32, h*w)
	mirrorPlanes(mo, mirr, h, w)
	mirrorPlanes(mm, orig, h, w)
	FlipBlend(mdst, mo, mm, h, w)
	back := make([]float32, h*w)
	mirrorPlanes(back, mdst, h, w)
	single := 0
	for i := range dst {
		if back[i] != dst[i] {
			t.Fatalf("pixel %d: mirrored blend %v, blend %v", i, back[i], dst[i])
		}
		if dst[i] == orig[i] || dst[i] == mirr[i] {
			single++
		}
	}
	if single == 0 {
		t.Error("no pixel took a single prediction: the random maps do not exercise the borders")
	}
}

// TestFlipBlendTorch compares FlipBlend, bit for bit, with the blend of
// testdata/model/flipblend_torch.json (gen_flipblend.py, python3-torch
// 1.13.1, numpy 1.24.2), where each prediction's support is where PyTorch's
// grid_sample (bilinear, zeros padding, align_corners=True) of an all-ones
// image gives full weight at its match, the mirrored prediction's computed
// in the mirrored frame. The fixture holds pixels of all three kinds.
func TestFlipBlendTorch(t *testing.T) {
	b, err := os.ReadFile(filepath.Join("..", "testdata", "model", "flipblend_torch.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		H, W                  int
		Orig, Mirrored, Blend []float64
		Case                  []int
	}
	if err := json.Unmarshal(b, &fx); err != nil {
		t.Fatal(err)
	}
	n := fx.H * fx.W
	if n == 0 || len(fx.Orig) != n || len(fx.Mirrored) != n || len(fx.Blend) != n || len(fx.Case) != n {
		t.Fatalf("fixture of %dx%d with %d, %d, %d, %d values", fx.W, fx.H, len(fx.Orig), len(fx.Mirrored), len(fx.Blend), len(fx.Case))
	}
	f32 := func(v []float64) []float32 {
		o := make([]float32, len(v))
		for i, x := range v {
			o[i] = float32(x)
		}
		return o
	}
	dst := make([]float32, n)
	FlipBlend(dst, f32(fx.Orig), f32(fx.Mirrored), fx.H, fx.W)
	var kinds [3]int
	for i, want := range f32(fx.Blend) {
		kinds[fx.Case[i]]++
		if dst[i] != want {
			t.Errorf("row %d column %d (case %d): %v, want %v", i/fx.W, i%fx.W, fx.Case[i], dst[i], want)
		}
	}
	if kinds[0] == 0 || kinds[1] == 0 || kinds[2] == 0 {
		t.Errorf("the fixture lacks a case: %d mean, %d mirrored only, %d orig only", kinds[0], kinds[1], kinds[2])
	}
}
