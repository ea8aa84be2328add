package warp

import (
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// gridSampleFixtures is testdata/warp/grid_sample.json, written by
// testdata/warp/gen_grid_sample.py.
type gridSampleFixtures struct {
	Source string `json:"source"`
	Torch  string `json:"debian_python3_torch"`
	Cases  []struct {
		Name        string `json:"name"`
		File        string `json:"file"`
		N, C, H, W  int
		Direction   string `json:"direction"`
		PaddingMode string `json:"padding_mode"`
		Arrays      []struct {
			Name string `json:"name"`
			Len  int    `json:"len"`
		} `json:"arrays"`
	} `json:"cases"`
}

// readF64 splits a little-endian float64 file into the named arrays.
func readF64(path string, names []string, lens []int) (map[string][]float64, error) {
	raw, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	total := 0
	for _, n := range lens {
		total += n
	}
	if len(raw) != 8*total {
		return nil, fmt.Errorf("%s: %d bytes, want %d", path, len(raw), 8*total)
	}
	out := make(map[string][]float64, len(names))
	off := 0
	for i, name := range names {
		a := make([]float64, lens[i])
		for j := range a {
			a[j] = math.Float64frombits(binary.LittleEndian.Uint64(raw[off:]))
			off += 8
		}
		out[name] = a
	}
	return out, nil
}

func toF32(a []float64) []float32 {
	out := make([]float32, len(a))
	for i, v := range a {
		out[i] = float32(v)
	}
	return out
}

// TestGridSample compares Forward and Backward with PyTorch's
// torch.nn.functional.grid_sample (Debian python3-torch 1.13.1, mode
// 'bilinear', align_corners=True, computed in float64; padding_mode 'zeros'
// is Zero, 'border' is Clamp). The disparity gradient is PyTorch's autograd
// through the sampling grid. See testdata/warp/gen_grid_sample.py.
//
// Tolerances follow from float32 rounding in the kernel: u = x + dir·W·d is
// rounded at most twice, an error of about 2 ulp(W) ≤ 2·2^-18 for W ≤ 65,
// which moves a sample by at most that times |src[i+1]-src[i]| ≤ 1; so the
// output is held to 2e-5. A source gradient sums a few such weights times
// |gradDst| ≤ 1: 1e-4. The disparity gradient is W·Σ_c g·(src[i+1]-src[i]),
// whose float32 rounding is relative: 1e-5·(1 + |ref|). The kink cases are
// exact dyadic arithmetic (u integer, weights 0 and 1), held to 1e-6.
func TestGridSample(t *testing.T) {
	dir := filepath.Join("..", "testdata", "warp")
	raw, err := os.ReadFile(filepath.Join(dir, "grid_sample.json"))
	if err != nil {
		t.Fatal(err)
	}
	var fx gridSampleFixtures
	if err := json.Unmarshal(raw, &fx); err != nil {
		t.Fatal(err)
	}
	if len(fx.Cases) < 10 {
		t.Fatalf("only %d fixture cases", len(fx.Cases))
	}
	for _, tc := range fx.Cases {
		t.Run(tc.Name, func(t *testing.T) {
			var names []string
			var lens []int
			for _, a := range tc.Arrays {
				names = append(names, a.Name)
				lens = append(lens, a.Len)
			}
			a, err := readF64(filepath.Join(dir, tc.File), names, lens)
			if err != nil {
				t.Fatal(err)
			}
			s := Shape{N: tc.N, C: tc.C, H: tc.H, W: tc.W}
			d, okd := map[string]Direction{"RebuildLeft": RebuildLeft, "RebuildRight": RebuildRight}[tc.Direction]
			// PyTorch's padding_mode names.
			b, okb := map[string]Border{"zeros": Zero, "border": Clamp}[tc.PaddingMode]
			if !okd || !okb {
				t.Fatalf("direction %q, padding mode %q", tc.Direction, tc.PaddingMode)
			}
			src, disp, gout := toF32(a["src"]), toF32(a["disp"]), toF32(a["gout"])
			out := make([]float32, len(src))
			Forward(out, nil, src, disp, s, d, b)
			gsrc := make([]float32, len(src))
			gdisp := make([]float32, len(disp))
			Backward(gsrc, gdisp, gout, src, disp, s, d, b)

			outTol, gsrcTol, gdispRel := 2e-5, 1e-4, 1e-5
			if strings.HasSuffix(tc.Name, "_kinks") {
				outTol, gsrcTol, gdispRel = 1e-6, 1e-6, 1e-6
			}
			compare(t, "output", out, a["out"], outTol, 0)
			compare(t, "source gradient", gsrc, a["gsrc"], gsrcTol, 0)
			compare(t, "disparity gradient", gdisp, a["gdisp"], gdispRel, gdispRel)
		})
	}
}

// compare reports the first element where |got-want| > atol + rtol·|want|,
// and logs the largest error seen.
func compare(t *testing.T, what string, got []float32, want []float64, atol, rtol float64) {
	t.Helper()
	worst := 0.0
	for i, w := range want {
		e := math.Abs(float64(got[i]) - w)
		worst = max(worst, e)
		if e > atol+rtol*math.Abs(w) {
			t.Errorf("%s[%d] = %v, PyTorch 1.13.1 grid_sample gives %v (|err| %.3g)", what, i, got[i], w, e)
			return
		}
	}
	t.Logf("%s: max |err| %.3g vs PyTorch 1.13.1", what, worst)
}
