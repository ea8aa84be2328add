package depth

import (
	"encoding/json"
	"image"
	"math"
	"os"
	"testing"
)

func TestCubehelixEndpoints(t *testing.T) {
	for _, c := range []Cubehelix{DefaultCubehelix, {}, {Start: 0.5, Rotations: -1.5, Hue: 1}, {Start: 1, Rotations: 3, Hue: 2, Gamma: 2}} {
		if r, g, b := c.RGB(0); r != 0 || g != 0 || b != 0 {
			t.Errorf("%+v: λ=0 gives (%v, %v, %v), want black", c, r, g, b)
		}
		if r, g, b := c.RGB(1); r != 1 || g != 1 || b != 1 {
			t.Errorf("%+v: λ=1 gives (%v, %v, %v), want white", c, r, g, b)
		}
		if col := c.Color(1); col.R != 255 || col.G != 255 || col.B != 255 || col.A != 255 {
			t.Errorf("%+v: Color(1) = %v", c, col)
		}
	}
	// Out-of-range and NaN fractions clamp.
	if r, _, _ := DefaultCubehelix.RGB(math.NaN()); r != 0 {
		t.Errorf("NaN gives red %v", r)
	}
	if r, _, _ := DefaultCubehelix.RGB(7); r != 1 {
		t.Errorf("λ=7 gives red %v", r)
	}
}

// TestCubehelixLuminance: with the brightness weights of Green (2011)
// (0.30, 0.59, 0.11; from memory of the paper, and the coefficients satisfy
// them: 0.30·(−0.14861) + 0.59·(−0.29227) + 0.11·1.97294 ≈ 0), brightness
// equals λ^γ where nothing clips, so it is monotone. The default must not
// clip at all.
func TestCubehelixLuminance(t *testing.T) {
	// The deviation directions (the cos and sin columns of the formula) have
	// no brightness: that is what makes brightness equal λ^γ.
	cosDir := 0.30*-0.14861 + 0.59*-0.29227 + 0.11*1.97294
	sinDir := 0.30*1.78277 + 0.59*-0.90649 + 0.11*0
	if math.Abs(cosDir) > 1e-5 || math.Abs(sinDir) > 1e-5 {
		t.Fatalf("coefficients carry brightness %v, %v", cosDir, sinDir)
	}
	c := DefaultCubehelix
	prev := -1.0
	for i := 0; i <= 4096; i++ {
		lambda := float64(i) / 4096
		r, g, b := c.RGB(lambda)
		y := 0.30*r + 0.59*g + 0.11*b
		if want := math.Pow(lambda, c.Gamma); math.Abs(y-want) > 1e-5 {
			t.Fatalf("λ=%v: brightness %v, want λ^γ = %v (a channel clipped?)", lambda, y, want)
		}
		if y < prev {
			t.Fatalf("brightness falls at λ=%v: %v < %v", lambda, y, prev)
		}
		prev = y
	}
	// The 8-bit table keeps the order too, up to one level of rounding.
	prev = -1
	for i := 0; i <= 1023; i++ {
		col := c.Color(float64(i) / 1023)
		y := 0.30*float64(col.R) + 0.59*float64(col.G) + 0.11*float64(col.B)
		if y < prev-0.6 {
			t.Fatalf("8-bit brightness falls at %d: %v < %v", i, y, prev)
		}
		prev = math.Max(prev, y)
	}
}

// TestCubehelixFormula compares RGB with hand evaluation of the formula at
// λ = 0.5 for the example parameters (start 0.5, rotations −1.5, hue 1,
// γ 1): φ = 2π(1/6 − 0.75) = −7π/6, a = 1·0.25/2 = 0.125, and with
// cos φ = −√3/2, sin φ = ½:
// R = 0.5 + 0.125(0.14861·√3/2 + 1.78277/2), and so on.
func TestCubehelixFormula(t *testing.T) {
	c := Cubehelix{Start: 0.5, Rotations: -1.5, Hue: 1, Gamma: 1}
	r, g, b := c.RGB(0.5)
	s3 := math.Sqrt(3) / 2
	wantR := 0.5 + 0.125*(0.14861*s3+1.78277*0.5)
	wantG := 0.5 + 0.125*(0.29227*s3-0.90649*0.5)
	wantB := 0.5 + 0.125*(-1.97294*s3)
	near(t, "R", r, wantR, 1e-12)
	near(t, "G", g, wantG, 1e-12)
	near(t, "B", b, wantB, 1e-12)
}

// TestCubehelixMatplotlib compares RGB with matplotlib 3.6.3's
// _cm._ch_helper (Debian python3-matplotlib; testdata/depth/cubehelix.json,
// made by make.py) at nine fractions for three parameter sets. matplotlib's
// helper does not clip, so only unclipped values are compared.
func TestCubehelixMatplotlib(t *testing.T) {
	data, err := os.ReadFile("../testdata/depth/cubehelix.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx struct {
		Lambda []float64
		Cases  []struct {
			Gamma, Start, Rotations, Hue float64
			R, G, B                      []float64
		}
	}
	if err := json.Unmarshal(data, &fx); err != nil {
		t.Fatal(err)
	}
	compared := 0
	for _, cs := range fx.Cases {
		c := Cubehelix{Start: cs.Start, Rotations: cs.Rotations, Hue: cs.Hue, Gamma: cs.Gamma}
		for i, lambda := range fx.Lambda {
			r, g, b := c.RGB(lambda)
			for k, p := range [][2]float64{{r, cs.R[i]}, {g, cs.G[i]}, {b, cs.B[i]}} {
				if p[1] < 0 || p[1] > 1 {
					continue
				}
				compared++
				if math.Abs(p[0]-p[1]) > 1e-12 {
					t.Errorf("%+v λ=%v channel %d: %v, matplotlib %v", c, lambda, k, p[0], p[1])
				}
			}
		}
	}
	if compared < 60 {
		t.Errorf("only %d values compared", compared)
	}
}

func TestColorMaps(t *testing.T) {
	d := dispRow(1, 2, 3, 0)
	img, err := ColorDisparity(d, nil)
	if err != nil {
		t.Fatal(err)
	}
	if img.Rect != d.Rect {
		t.Errorf("bounds %v", img.Rect)
	}
	// Auto range [1, 3]: 1 is black, 3 white, the invalid pixel transparent.
	if c := img.NRGBAAt(0, 0); c.R != 0 || c.G != 0 || c.B != 0 || c.A != 255 {
		t.Errorf("smallest disparity: %v, want opaque black", c)
	}
	if c := img.NRGBAAt(2, 0); c.R != 255 || c.G != 255 || c.B != 255 {
		t.Errorf("largest disparity: %v, want white", c)
	}
	if c := img.NRGBAAt(3, 0); c.A != 0 {
		t.Errorf("invalid pixel: %v, want transparent", c)
	}
	if c, want := img.NRGBAAt(1, 0), DefaultCubehelix.Color(0.5); c != want {
		t.Errorf("middle: %v, want %v", c, want)
	}
	// Depth: near is bright.
	z := depthRow(1, 4)
	zi, err := ColorDepth(z, &ColorOptions{Min: 1, Max: 4, Scheme: &Cubehelix{}})
	if err != nil {
		t.Fatal(err)
	}
	if c := zi.NRGBAAt(0, 0); c.R != 255 {
		t.Errorf("nearest depth: %v, want white", c)
	}
	if c := zi.NRGBAAt(1, 0); c.R != 0 {
		t.Errorf("farthest depth: %v, want black", c)
	}
	if _, err := ColorDepth(z, &ColorOptions{Min: 3, Max: 2}); err == nil {
		t.Error("Min > Max: no error")
	}
	sub := &Disparity{d.sub(image.Rect(1, 0, 3, 1))}
	si, err := ColorDisparity(sub, &ColorOptions{Min: 1, Max: 3})
	if err != nil || si.Rect != image.Rect(1, 0, 3, 1) || si.NRGBAAt(2, 0).R != 255 {
		t.Errorf("sub-map: %v, %v", si, err)
	}
}
