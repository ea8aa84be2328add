package warp

import (
	"math"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

func TestWarpBadInput(t *testing.T) {
	good := func() *planar.Image {
		im := planar.New(2, 3, 4, 5)
		for i := range im.Pix {
			im.Pix[i] = float32(i%7) / 7
		}
		return im
	}
	disp := func() *planar.Image {
		d := planar.New(2, 1, 4, 5)
		for i := range d.Pix {
			d.Pix[i] = 0.1
		}
		return d
	}
	nanAt := func(im *planar.Image, i int) *planar.Image { im.Pix[i] = float32(math.NaN()); return im }
	infAt := func(im *planar.Image, i int) *planar.Image { im.Pix[i] = float32(math.Inf(-1)); return im }
	for _, tc := range []struct {
		name      string
		src, disp *planar.Image
		dir       Direction
		b         Border
		want      string // expected in the message, after "warp: "
	}{
		{"nil source", nil, disp(), RebuildLeft, Zero, "source image is nil"},
		{"nil disparity", good(), nil, RebuildLeft, Zero, "disparity is nil"},
		{"empty source", &planar.Image{N: 0, C: 3, H: 4, W: 5}, disp(), RebuildLeft, Zero, "source image is empty"},
		{"empty disparity", good(), &planar.Image{N: 2, C: 1, H: 4, W: 0}, RebuildLeft, Zero, "disparity is empty"},
		{"short Pix", &planar.Image{N: 2, C: 3, H: 4, W: 5, Pix: make([]float32, 119)}, disp(), RebuildLeft, Zero, "source image has 119 values for shape 2x3x4x5"},
		{"three-channel disparity", good(), planar.New(2, 3, 4, 5), RebuildLeft, Zero, "disparity must have 1 channel, has 3"},
		{"width mismatch", good(), planar.New(2, 1, 4, 6), RebuildLeft, Zero, "disparity shape 2x1x4x6 does not match source image shape 2x3x4x5"},
		{"batch mismatch", good(), planar.New(1, 1, 4, 5), RebuildLeft, Zero, "does not match"},
		{"height mismatch", good(), planar.New(2, 1, 3, 5), RebuildLeft, Zero, "does not match"},
		{"direction 0", good(), disp(), 0, Zero, "unknown direction Direction(0)"},
		{"direction 2", good(), disp(), 2, Zero, "unknown direction"},
		{"border 9", good(), disp(), RebuildRight, 9, "unknown border mode Border(9)"},
		{"NaN disparity", good(), nanAt(disp(), 23), RebuildLeft, Zero, "disparity has a non-finite value NaN at (n=1, c=0, y=0, x=3)"},
		{"Inf disparity", good(), infAt(disp(), 0), RebuildLeft, Clamp, "disparity has a non-finite value -Inf at (n=0, c=0, y=0, x=0)"},
		{"NaN source", nanAt(good(), 20), disp(), RebuildLeft, Zero, "source image has a non-finite value NaN at (n=0, c=1, y=0, x=0)"},
	} {
		out, mask, err := Warp(tc.src, tc.disp, tc.dir, tc.b)
		if err == nil {
			t.Errorf("%s: no error", tc.name)
			continue
		}
		if out != nil || mask != nil {
			t.Errorf("%s: results returned with an error", tc.name)
		}
		msg := err.Error()
		if !strings.HasPrefix(msg, "warp: ") || !strings.Contains(msg, tc.want) {
			t.Errorf("%s: error %q, want \"warp: ...%s...\"", tc.name, msg, tc.want)
		}
	}
}

// TestWarpMatchesForward checks that the checked entry point returns what
// the kernel writes, with a mask of the right shape.
func TestWarpMatchesForward(t *testing.T) {
	s := Shape{N: 2, C: 3, H: 4, W: 7}
	src, disp, _ := randomCase(99, s, RebuildRight)
	srcIm := &planar.Image{N: s.N, C: s.C, H: s.H, W: s.W, Pix: src}
	dispIm := &planar.Image{N: s.N, C: 1, H: s.H, W: s.W, Pix: disp}
	out, mask, err := Warp(srcIm, dispIm, RebuildRight, Clamp)
	if err != nil {
		t.Fatal(err)
	}
	if !out.SameShape(srcIm) || !mask.SameShape(dispIm) {
		t.Fatalf("shapes %s and %s, want %s and %s", out.Shape(), mask.Shape(), srcIm.Shape(), dispIm.Shape())
	}
	want := make([]float32, len(src))
	wantMask := make([]float32, len(disp))
	Forward(want, wantMask, src, disp, s, RebuildRight, Clamp)
	for i := range want {
		if out.Pix[i] != want[i] {
			t.Fatalf("out[%d] = %v, Forward gives %v", i, out.Pix[i], want[i])
		}
	}
	valid := 0
	for i := range wantMask {
		if mask.Pix[i] != wantMask[i] {
			t.Fatalf("mask[%d] = %v, Forward gives %v", i, mask.Pix[i], wantMask[i])
		}
		valid += int(mask.Pix[i])
	}
	if valid == 0 || valid == len(wantMask) {
		t.Errorf("mask has %d of %d valid pixels; the case should have both kinds", valid, len(wantMask))
	}
}

// TestBatch checks that a batch of N gives the same values as N separate
// calls, each image with its own disparity.
func TestBatch(t *testing.T) {
	s := Shape{N: 3, C: 3, H: 5, W: 11}
	for _, b := range []Border{Zero, Clamp} {
		src, disp, gradDst := randomCase(7, s, RebuildLeft)
		dst, mask := make([]float32, len(src)), make([]float32, len(disp))
		gs, gd := make([]float32, len(src)), make([]float32, len(disp))
		Forward(dst, mask, src, disp, s, RebuildLeft, b)
		Backward(gs, gd, gradDst, src, disp, s, RebuildLeft, b)
		one := Shape{N: 1, C: s.C, H: s.H, W: s.W}
		ni, np := s.C*s.H*s.W, s.H*s.W
		for n := 0; n < s.N; n++ {
			is, ps := src[n*ni:(n+1)*ni], disp[n*np:(n+1)*np]
			d1, m1 := make([]float32, ni), make([]float32, np)
			gs1, gd1 := make([]float32, ni), make([]float32, np)
			Forward(d1, m1, is, ps, one, RebuildLeft, b)
			Backward(gs1, gd1, gradDst[n*ni:(n+1)*ni], is, ps, one, RebuildLeft, b)
			for _, c := range []struct {
				what       string
				batch, one []float32
			}{{"out", dst[n*ni : (n+1)*ni], d1}, {"mask", mask[n*np : (n+1)*np], m1},
				{"gradSrc", gs[n*ni : (n+1)*ni], gs1}, {"gradDisp", gd[n*np : (n+1)*np], gd1}} {
				for i := range c.one {
					if c.batch[i] != c.one[i] {
						t.Fatalf("%v image %d: batch %s[%d] = %v, alone %v", b, n, c.what, i, c.batch[i], c.one[i])
					}
				}
			}
		}
	}
}

// TestNoAllocations guards the kernels' steady state (testing.AllocsPerRun).
func TestNoAllocations(t *testing.T) {
	s := Shape{N: 2, C: 3, H: 8, W: 150} // W > chunk: several chunks per row
	src, disp, gradDst := randomCase(3, s, RebuildLeft)
	dst, mask := make([]float32, len(src)), make([]float32, len(disp))
	gs, gd := make([]float32, len(src)), make([]float32, len(disp))
	for _, b := range []Border{Zero, Clamp} {
		if a := testing.AllocsPerRun(20, func() { Forward(dst, mask, src, disp, s, RebuildLeft, b) }); a != 0 {
			t.Errorf("Forward %v: %v allocations per call", b, a)
		}
		if a := testing.AllocsPerRun(20, func() { Backward(gs, gd, gradDst, src, disp, s, RebuildLeft, b) }); a != 0 {
			t.Errorf("Backward %v: %v allocations per call", b, a)
		}
	}
}

// FuzzWarp feeds Warp arbitrary shapes and values: it must return an error
// or a result, never panic; a result has a 0/1 mask and stays within the
// range of the source (bilinear weights are a partition of one, and Zero
// adds only zeros).
func FuzzWarp(f *testing.F) {
	f.Add([]byte{0, 0, 128, 63, 0, 0, 0, 64}, uint8(1), uint8(1), uint8(1), uint8(2), uint8(1), int8(-1), uint8(0), uint16(0))
	f.Add([]byte{1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12}, uint8(1), uint8(2), uint8(1), uint8(1), uint8(1), int8(1), uint8(1), uint16(3))
	f.Add([]byte{0, 0, 192, 127, 0, 0, 128, 127}, uint8(1), uint8(1), uint8(1), uint8(1), uint8(1), int8(1), uint8(0), uint16(0))
	f.Add([]byte{}, uint8(0), uint8(0), uint8(0), uint8(0), uint8(0), int8(0), uint8(7), uint16(9))
	f.Fuzz(func(t *testing.T, data []byte, n, c, h, w, dc uint8, dir int8, b uint8, cut uint16) {
		vals := make([]float32, len(data)/4)
		for i := range vals {
			vals[i] = math.Float32frombits(uint32(data[4*i]) | uint32(data[4*i+1])<<8 | uint32(data[4*i+2])<<16 | uint32(data[4*i+3])<<24)
		}
		N, C, H, W, DC := int(n%4), int(c%5), int(h%6), int(w%9), int(dc%3)
		ni, nd := N*C*H*W, N*DC*H*W
		// Build Pix of the declared length where the data suffice, else
		// short, so both mismatches and valid calls occur.
		take := func(k int) []float32 {
			if k <= len(vals) {
				p := vals[:k]
				vals = vals[k:]
				return p
			}
			return vals
		}
		src := &planar.Image{N: N, C: C, H: H, W: W, Pix: take(ni)}
		disp := &planar.Image{N: N, C: DC, H: H, W: W, Pix: take(nd)}
		if cut%5 == 4 {
			src = nil
		}
		out, mask, err := Warp(src, disp, Direction(dir), Border(b))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "warp: ") {
				t.Fatalf("error %q does not start with the package name", err)
			}
			return
		}
		var hi float64
		for _, v := range src.Pix {
			hi = max(hi, math.Abs(float64(v)))
		}
		for i, v := range out.Pix {
			if math.Abs(float64(v)) > hi*(1+1e-6) {
				t.Fatalf("out[%d] = %v beyond the source range ±%v", i, v, hi)
			}
		}
		for i, v := range mask.Pix {
			if v != 0 && v != 1 {
				t.Fatalf("mask[%d] = %v", i, v)
			}
		}
	})
}

// FuzzKernels feeds Forward and Backward arbitrary disparity bits (NaN,
// ±Inf, huge, subnormal) over sources in [0, 1]: no panic, a 0/1 mask,
// outputs in [0, 1] and finite gradients.
func FuzzKernels(f *testing.F) {
	f.Add([]byte{0, 0, 192, 127, 0, 0, 128, 255, 255, 255, 127, 127, 1, 0, 0, 0}, uint8(2), uint8(3), int8(1), uint8(1))
	f.Add([]byte{0, 0, 128, 62, 0, 0, 0, 191}, uint8(1), uint8(1), int8(-1), uint8(0))
	f.Fuzz(func(t *testing.T, data []byte, hw, c uint8, dir int8, b uint8) {
		vals := make([]float32, len(data)/4)
		for i := range vals {
			vals[i] = math.Float32frombits(uint32(data[4*i]) | uint32(data[4*i+1])<<8 | uint32(data[4*i+2])<<16 | uint32(data[4*i+3])<<24)
		}
		if len(vals) == 0 {
			return
		}
		s := Shape{N: 1, C: int(c%3) + 1, H: int(hw%3) + 1}
		s.W = (len(vals) + s.H - 1) / s.H
		disp := make([]float32, s.H*s.W)
		copy(disp, vals)
		src := make([]float32, s.C*s.H*s.W)
		gradDst := make([]float32, len(src))
		for i := range src {
			src[i] = float32(i%11) / 10
			gradDst[i] = float32(i%5) - 2
		}
		d := RebuildLeft
		if dir >= 0 {
			d = RebuildRight
		}
		bd := Border(b % 2)
		dst, mask := make([]float32, len(src)), make([]float32, len(disp))
		Forward(dst, mask, src, disp, s, d, bd)
		gs, gd := make([]float32, len(src)), make([]float32, len(disp))
		Backward(gs, gd, gradDst, src, disp, s, d, bd)
		for i, v := range dst {
			if !(v >= 0 && v <= 1+1e-6) {
				t.Fatalf("out[%d] = %v outside the source range [0, 1]", i, v)
			}
		}
		for i, v := range mask {
			if v != 0 && v != 1 {
				t.Fatalf("mask[%d] = %v", i, v)
			}
		}
		for _, g := range [][]float32{gs, gd} {
			for i, v := range g {
				if math.IsNaN(float64(v)) || math.IsInf(float64(v), 0) {
					t.Fatalf("gradient[%d] = %v", i, v)
				}
			}
		}
	})
}
