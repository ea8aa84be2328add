package model

import (
	"bytes"
	"encoding/binary"
	"flag"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/planar"
)

var updateArchModule = flag.Bool("update-arch-module", false, "rewrite the inputs of testdata/arch (then run torch_modules.py there)")

// The size the documented modules run at: the smallest multiple of 32 of
// the demo's 2:1 shape at which the one-image network's 1/32 level is 2
// pixels (reflect padding's minimum) and the stereo network's 1/8 level 16.
const archModuleW, archModuleH = 128, 64

// archModulePair returns the two views of testdata/synth/greenhouse pair
// 000000 (256×128) as 2×2 block means, rounded to bytes: the left view's
// three planes, then the right view's.
func archModulePair(t *testing.T) []byte {
	u8 := make([]byte, 0, 2*3*archModuleH*archModuleW)
	for _, view := range []string{"left", "right"} {
		img := testutil.PNG(t, filepath.Join("..", "testdata", "synth", "greenhouse", view, "000000.png"))
		b := img.Bounds()
		if b.Dx() != 2*archModuleW || b.Dy() != 2*archModuleH {
			t.Fatalf("greenhouse %s 000000 is %v, want %dx%d", view, b, 2*archModuleW, 2*archModuleH)
		}
		for c := range 3 {
			for y := range archModuleH {
				for x := range archModuleW {
					sum := uint32(2)
					for _, d := range [4][2]int{{0, 0}, {1, 0}, {0, 1}, {1, 1}} {
						r, g, bl, _ := img.At(b.Min.X+2*x+d[0], b.Min.Y+2*y+d[1]).RGBA()
						sum += [3]uint32{r, g, bl}[c] >> 8
					}
					u8 = append(u8, byte(sum/4))
				}
			}
		}
	}
	return u8
}

// archModuleNet returns a Net of the embedded weights w at the modules' size.
func archModuleNet(t *testing.T, w *Weights) *Net {
	c := w.Config
	c.Width, c.Height = archModuleW, archModuleH
	net, err := NewNet(&Weights{Config: c, Params: w.Params}, 1)
	if err != nil {
		t.Fatal(err)
	}
	return net
}

// readFloat32s reads a file of little-endian float32 values.
func readFloat32s(t *testing.T, path string) []float32 {
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	v := make([]float32, len(raw)/4)
	if err := binary.Read(bytes.NewReader(raw), binary.LittleEndian, v); err != nil {
		t.Fatal(err)
	}
	return v
}

// compareArchModule compares the four outputs with the float32 values of
// the file name in testdata/arch, output by output, to tol of the largest
// |value| of each reference output.
func compareArchModule(t *testing.T, name string, outs [Scales]*planar.Image, tol float64) {
	want := readFloat32s(t, filepath.Join("..", "testdata", "arch", name))
	off := 0
	for s, o := range outs {
		if off+len(o.Pix) > len(want) {
			t.Fatalf("%s has %d values, the outputs need more", name, len(want))
		}
		ref := want[off : off+len(o.Pix)]
		off += len(o.Pix)
		worst, scale, lo, hi := 0.0, 0.0, math.Inf(1), math.Inf(-1)
		for i, v := range o.Pix {
			r := float64(ref[i])
			worst = max(worst, math.Abs(float64(v)-r))
			scale = max(scale, math.Abs(r))
			lo, hi = min(lo, r), max(hi, r)
		}
		t.Logf("disp%d %s: reference d·W in [%.2f, %.2f] px, max |Go − PyTorch| = %.3g (%.3g of the scale)",
			s, o.Shape(), lo*float64(o.W), hi*float64(o.W), worst, worst/scale)
		if worst > tol*scale {
			t.Errorf("disp%d differs from the documented module by %.3g > %g × %.3g", s, worst, tol, scale)
		}
		// A flat output would prove little.
		if hi-lo < 0.05*scale {
			t.Errorf("disp%d spans only [%v, %v]", s, lo, hi)
		}
	}
	if off != len(want) {
		t.Errorf("%s has %d values, the outputs %d", name, len(want), off)
	}
}

// TestArchTorchModule checks both architectures against PyTorch modules
// written by hand from their documentation, not from the layer list
// (testdata/arch/torch_modules.py, Debian python3-torch 1.13.1, float64):
// the embedded default weights on the left view of a synthetic greenhouse
// pair, and the embedded stereo weights (version 2) on the pair, at
// 128×64. A wrong layer in Build or buildStereo (an input, an order, a
// padding, an upsampling, a unit) would be walked faithfully by the other
// PyTorch references, which read the list Go writes; here it moves the
// outputs by more than the tolerance. The script prints how far some
// misreadings of the documentation move them, as fractions of the scale:
// PyTorch's other bilinear convention (align_corners=True) 5.6e-4 for the
// one-image network and 0.14 for the stereo one, the stereo encoder run on
// mirrored images instead of its features mirrored 0.05, zero instead of
// reflect padding 0.66 and 0.44.
//
// The tolerance, 1e-4 of each output's largest value: Go computes in
// float32 and sums in another order than PyTorch's float64, and the
// rounding errors of some 30 layers in float32 stay near 1e-6 of the
// scale; 1e-4 is the budget of issue 10 and leaves room for one fused
// multiply-add per operation on other architectures.
//
// The classical matcher (package sgm) is not a PyTorch thing: its
// full-resolution output, as model.Matching holds it before pooling, is an
// input of both sides (match.bin, written by Go). The pooling to each level
// is the module's own, from Matching.Pool's doc.
func TestArchTorchModule(t *testing.T) {
	dir := filepath.Join("..", "testdata", "arch")
	u8 := archModulePair(t)
	testutil.Golden(t, filepath.Join(dir, "pair_u8.bin"), u8, *updateArchModule, "with -update-arch-module and the script")
	half := 3 * archModuleH * archModuleW
	left, right := planar.New(1, 3, archModuleH, archModuleW), planar.New(1, 3, archModuleH, archModuleW)
	for i := range half {
		left.Pix[i], right.Pix[i] = float32(u8[i])/255, float32(u8[half+i])/255
	}

	t.Run("one-image", func(t *testing.T) {
		w, err := Default()
		if err != nil {
			t.Fatal(err)
		}
		outs, err := archModuleNet(t, w).Forward(left)
		if err != nil {
			t.Fatal(err)
		}
		compareArchModule(t, "oneimage_out.bin", outs, 1e-4)
	})

	t.Run("stereo", func(t *testing.T) {
		w, err := DefaultStereo()
		if err != nil {
			t.Fatal(err)
		}
		if w.Config.Version != 2 {
			t.Fatalf("embedded stereo weights are version %d; the module is written for version 2", w.Config.Version)
		}
		net := archModuleNet(t, w)
		if _, err := net.ForwardPair(left, right); err != nil {
			t.Fatal(err)
		}
		plane := archModuleH * archModuleW
		if len(net.match.disp) != 2*plane {
			t.Fatalf("the matching holds %d values, want %d", len(net.match.disp), 2*plane)
		}
		fresh := f32bytes(net.match.disp)
		for _, v := range net.match.valid {
			fresh = append(fresh, byte(v))
		}
		path := filepath.Join(dir, "match.bin")
		if *updateArchModule {
			if err := os.WriteFile(path, fresh, 0o644); err != nil {
				t.Fatal(err)
			}
			t.Log("inputs rewritten: now run /usr/bin/python3 testdata/arch/torch_modules.py")
		}
		raw, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if len(raw) != 5*2*plane {
			t.Fatalf("match.bin has %d bytes, want %d", len(raw), 5*2*plane)
		}
		if !bytes.Equal(raw, fresh) {
			t.Log("package sgm's match differs from match.bin now; the network runs on the committed one")
		}
		if err := binary.Read(bytes.NewReader(raw[:4*2*plane]), binary.LittleEndian, net.match.disp); err != nil {
			t.Fatal(err)
		}
		for i, b := range raw[4*2*plane:] {
			net.match.valid[i] = float32(b)
		}
		net.match.fixed = true
		outs, err := net.ForwardPair(left, right)
		if err != nil {
			t.Fatal(err)
		}
		compareArchModule(t, "stereo_out.bin", outs, 1e-4)
	})
}
