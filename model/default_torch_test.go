package model

import (
	"encoding/binary"
	"encoding/json"
	"flag"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/safetensors"
	"math"
	"os"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/model/demo"
)

var updateInterchange = flag.Bool("update-interchange", false, "rewrite the inputs of testdata/infer/torch_forward.py")

// interchangeSeed seeds the fresh weights of the interchange fixture.
const interchangeSeed = 7

// TestTorchInterchange checks that the network of this package computes
// what PyTorch computes from the same weights file: the default
// architecture's F16 weights file (seeded fresh weights) and the demo image
// go to testdata/infer/torch_forward.py, which parses the file by the
// safetensors specification and walks the layer list with
// torch.nn.functional in float32 (Debian python3-torch 1.13.1); its four
// outputs are committed in torch_forward.bin.
func TestTorchInterchange(t *testing.T) {
	dir := filepath.Join("..", "testdata", "infer")
	a, err := Build(Config{})
	if err != nil {
		t.Fatal(err)
	}
	w, err := NewWeights(Config{}, interchangeSeed)
	if err != nil {
		t.Fatal(err)
	}
	w.Provenance = map[string]string{"source": "model.NewWeights(model.Config{}, 7): untrained, for the interchange fixture"}
	img, err := demo.Left()
	if err != nil {
		t.Fatal(err)
	}
	b := img.Bounds()
	if b.Dx() != a.Input.W || b.Dy() != a.Input.H {
		t.Fatalf("demo image %v, network input %v", b, a.Input)
	}
	u8 := make([]byte, a.Input.Len())
	plane := a.Input.H * a.Input.W
	for y := range a.Input.H {
		for x := range a.Input.W {
			r, g, bl, _ := img.At(b.Min.X+x, b.Min.Y+y).RGBA()
			u8[y*a.Input.W+x], u8[plane+y*a.Input.W+x], u8[2*plane+y*a.Input.W+x] = uint8(r>>8), uint8(g>>8), uint8(bl>>8)
		}
	}
	archJSON, err := json.MarshalIndent(a, "", " ")
	if err != nil {
		t.Fatal(err)
	}
	if *updateInterchange {
		if err := w.Save(filepath.Join(dir, "weights_f16.safetensors"), safetensors.F16); err != nil {
			t.Fatal(err)
		}
		for name, data := range map[string][]byte{"default_arch.json": append(archJSON, '\n'), "input_u8.bin": u8} {
			if err := os.WriteFile(filepath.Join(dir, name), data, 0o644); err != nil {
				t.Fatal(err)
			}
		}
		t.Log("inputs rewritten: now run /usr/bin/python3 testdata/infer/torch_forward.py")
	}
	// The committed inputs must be what this code produces, or the
	// fixture belongs to another network.
	for name, b := range map[string][]byte{"default_arch.json": append(archJSON, '\n'), "input_u8.bin": u8} {
		testutil.Golden(t, filepath.Join(dir, name), b, false, "with -update-interchange and the script")
	}
	fw, err := Load(filepath.Join(dir, "weights_f16.safetensors"))
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range w.Params {
		for i, x := range v {
			if fw.Params[name][i] != safetensors.Float16From(safetensors.Float16Bits(x)) {
				t.Fatalf("weights_f16.safetensors %s[%d] is not the safetensors.F16 of seed %d", name, i, interchangeSeed)
			}
		}
	}
	raw, err := os.ReadFile(filepath.Join(dir, "torch_forward.bin"))
	if err != nil {
		t.Fatal(err)
	}
	net, err := NewNet(fw, 1)
	if err != nil {
		t.Fatal(err)
	}
	outs, err := net.Forward(demoInput(t))
	if err != nil {
		t.Fatal(err)
	}
	off := 0
	for s, o := range outs {
		if len(raw) < off+4*o.Len() {
			t.Fatalf("torch_forward.bin holds %d bytes", len(raw))
		}
		worst, lo, hi := 0.0, math.Inf(1), math.Inf(-1)
		for i, v := range o.Pix {
			want := math.Float32frombits(binary.LittleEndian.Uint32(raw[off+4*i:]))
			worst = max(worst, math.Abs(float64(v-want)))
			lo, hi = min(lo, float64(want)), max(hi, float64(want))
		}
		off += 4 * o.Len()
		t.Logf("disp%d %s: torch range [%.4f, %.4f], largest difference %.2g", s, o.Shape(), lo, hi, worst)
		// The budget of the issue; float32 against float32 with another
		// summation order differs by a few ulps. A wrong tensor layout or
		// layer moves values by the outputs' spread.
		if worst > 1e-4 {
			t.Errorf("disp%d differs from PyTorch by %g > 1e-4", s, worst)
		}
		if hi-lo < 0.01 {
			t.Errorf("disp%d spans only [%v, %v]: a saturated output proves little", s, lo, hi)
		}
	}
	if off != len(raw) {
		t.Errorf("torch_forward.bin has %d bytes left over", len(raw)-off)
	}
}

// TestTorchExport loads a weights file written by the export helper of
// testdata/infer/torch_forward.py (save_weights, from PyTorch tensors) and
// checks it holds the same values as the file it was read from.
func TestTorchExport(t *testing.T) {
	got, err := Load(filepath.Join("..", "testdata", "infer", "exported_tiny.safetensors"))
	if err != nil {
		t.Fatal(err)
	}
	want, err := Load(filepath.Join("..", "testdata", "model", "tiny_f32.safetensors"))
	if err != nil {
		t.Fatal(err)
	}
	if got.Provenance["source"] == "" {
		t.Error("provenance lost")
	}
	for name, v := range want.Params {
		for i := range v {
			if got.Params[name][i] != v[i] {
				t.Fatalf("%s[%d]: %v, want %v", name, i, got.Params[name][i], v[i])
			}
		}
	}
}
