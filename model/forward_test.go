package model

import (
	"encoding/binary"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

// TestForwardAgainstTorch runs the tiny network with the weights of
// tiny_f32.safetensors and compares the four outputs with the forward pass
// that testdata/model/gen_st.py computes by walking the same layer list
// (tiny_arch.json) with torch.nn.functional in float64 (Debian
// python3-torch 1.13; F.pad reflect, F.conv2d, F.elu, torch.sigmoid,
// F.interpolate nearest and bilinear with align_corners=False, torch.cat).
func TestForwardAgainstTorch(t *testing.T) {
	dir := filepath.Join("..", "testdata", "model")
	w, err := Load(filepath.Join(dir, "tiny_f32.safetensors"))
	if err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(filepath.Join(dir, "tiny_forward.bin"))
	if err != nil {
		t.Fatal(err)
	}
	vals := make([]float32, len(raw)/4)
	for i := range vals {
		vals[i] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*i:]))
	}
	const n = 2
	net, err := NewNet(w, n)
	if err != nil {
		t.Fatal(err)
	}
	a := net.Arch()
	in := planar.New(n, 3, a.Input.H, a.Input.W)
	if len(vals) < in.Len() {
		t.Fatalf("tiny_forward.bin holds %d values", len(vals))
	}
	copy(in.Pix, vals)
	vals = vals[in.Len():]
	outs, err := net.Forward(in)
	if err != nil {
		t.Fatal(err)
	}
	for s, o := range outs {
		want := vals[:o.Len()]
		vals = vals[o.Len():]
		worst := 0.0
		for i := range want {
			worst = max(worst, math.Abs(float64(o.Pix[i]-want[i])))
		}
		// float32 accumulation over about twenty layers against float64:
		// a few ulps of values near 0.15 (our tolerance). A wiring error
		// moves values by the outputs' spread, about 0.01.
		if worst > 1e-6 {
			t.Errorf("disp%d: largest difference from torch %g", s, worst)
		}
		t.Logf("disp%d %s: largest difference from torch %.2g", s, o.Shape(), worst)
	}
	if len(vals) != 0 {
		t.Errorf("%d values left in the fixture", len(vals))
	}
}

func TestForwardNoAllocAndErrors(t *testing.T) {
	w := tinyWeights(t)
	net, err := NewInspectNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	in := planar.New(1, 3, 64, 128)
	for i := range in.Pix {
		in.Pix[i] = float32(i%97) / 97
	}
	if _, err := net.Forward(in); err != nil {
		t.Fatal(err)
	}
	if n := testing.AllocsPerRun(5, func() { net.Forward(in) }); n != 0 && !raceEnabled {
		t.Errorf("Forward allocates %v times per call after warm-up", n)
	}
	outs, _ := net.Forward(in)
	for s, o := range outs {
		for _, v := range o.Pix {
			if !(v > 0 && v < 0.25) {
				t.Fatalf("disp%d value %v outside (0, d_max)", s, v)
			}
		}
	}
	if net.Tensor("enc5b") == nil || net.Tensor("nothing") != nil || net.Tensor(InputName) != nil {
		t.Error("Tensor lookup")
	}
	for _, tc := range []struct {
		im   *planar.Image
		want string
	}{
		{nil, "input image is nil"},
		{planar.New(2, 3, 64, 128), "shape 2x3x64x128"},
		{planar.New(1, 3, 64, 64), "shape 1x3x64x64"},
		{func() *planar.Image { m := in.Clone(); m.Pix[7] = float32(math.NaN()); return m }(), "non-finite"},
	} {
		if _, err := net.Forward(tc.im); err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("Forward: %v, want an error containing %q", err, tc.want)
		}
	}
	if _, err := NewNet(w, 0); err == nil {
		t.Error("batch 0 accepted")
	}
	if _, err := NewNet(w, math.MaxInt); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Errorf("batch MaxInt: %v", err)
	}
	delete(w.Params, "head1.weight")
	if _, err := NewNet(w, 1); err == nil || !strings.Contains(err.Error(), "head1.weight") {
		t.Errorf("NewNet with a missing parameter: %v", err)
	}
}

func benchmarkForward(b *testing.B, c Config, batch int) {
	w, err := NewWeights(c, 1)
	if err != nil {
		b.Fatal(err)
	}
	net, err := NewNet(w, batch)
	if err != nil {
		b.Fatal(err)
	}
	a := net.Arch()
	in := planar.New(batch, 3, a.Input.H, a.Input.W)
	for i := range in.Pix {
		in.Pix[i] = float32(i%251) / 251
	}
	if _, err := net.Forward(in); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		net.Forward(in)
	}
}

func BenchmarkForward256x128(b *testing.B)   { benchmarkForward(b, Config{}, 1) }
func BenchmarkForward512x256(b *testing.B)   { benchmarkForward(b, Config{Width: 512, Height: 256}, 1) }
func BenchmarkForward256x128N4(b *testing.B) { benchmarkForward(b, Config{}, 4) }

// TestNewNetHostileSize checks that a batch too large for planar.MaxValues
// values is refused before any tensor is allocated: with 415 parameters at
// the largest input (MaxNetPixels) a batch of 1024 would take gigabytes,
// and the input tensor alone exceeds planar.MaxValues. (A file cannot claim
// a larger input: Config.Validate refuses it.)
func TestNewNetHostileSize(t *testing.T) {
	one := []int{1, 1, 1, 1, 1}
	w, err := NewWeights(Config{Width: 1024, Height: 512, Encoder: one, Decoder: one}, 1)
	if err != nil {
		t.Fatal(err)
	}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err = NewNet(w, 1024)
	runtime.ReadMemStats(&after)
	if err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), "exceeds") {
		t.Errorf("NewNet of 1024 at 1024×512: %v, want a size error", err)
	}
	if a := after.TotalAlloc - before.TotalAlloc; a > 64<<20 {
		t.Errorf("NewNet allocated %d bytes before refusing", a)
	}
	// At the default size the same channels fit.
	w, err = NewWeights(Config{Encoder: one, Decoder: one}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := NewNet(w, 4); err != nil {
		t.Errorf("NewNet at the default size: %v", err)
	}
}
