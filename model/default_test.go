package model

import (
	"crypto/sha256"
	"encoding/hex"
	"flag"
	"math"
	"os"
	"path/filepath"
	"slices"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/safetensors"
)

var f32Weights = flag.String("f32-weights", "", "rewrite testdata/model/default_f32_disp0.safetensors from this F32 original of the embedded weights (a weights file or a training checkpoint; a relative path starts in model/, e.g. ../training/default/checkpoint.safetensors)")

// f32Reference is the committed output of the embedded weights' F32
// original: disp0 on the demo image (testdata/infer/input_u8.bin), with the
// SHA-256 of the F16 file it belongs to.
var f32Reference = filepath.Join("..", "testdata", "model", "default_f32_disp0.safetensors")

func TestDefault(t *testing.T) {
	w, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if len(defaultWeights) > 8<<20 {
		t.Errorf("embedded weights are %d bytes, the budget is 8 MB", len(defaultWeights))
	}
	if w.Provenance[ProvenanceStatus] == "" {
		t.Errorf("the embedded weights' provenance has no %q: %v", ProvenanceStatus, w.Provenance)
	}
	// Default returns a copy: changing it leaves the next one alone.
	w.Params["head0.bias"][0] = 42
	w2, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if w2.Params["head0.bias"][0] == 42 {
		t.Error("Default shares its tensors between calls")
	}
}

// demoInput returns the demo image as the network's input: the planes of
// testdata/infer/input_u8.bin (written by TestTorchInterchange) over 255.
func demoInput(t testing.TB) *planar.Image {
	a, err := Build(Config{})
	if err != nil {
		t.Fatal(err)
	}
	u8, err := os.ReadFile(filepath.Join("..", "testdata", "infer", "input_u8.bin"))
	if err != nil {
		t.Fatal(err)
	}
	in := planar.New(1, a.Input.C, a.Input.H, a.Input.W)
	if len(u8) != len(in.Pix) {
		t.Fatalf("input_u8.bin has %d bytes, the input %d values", len(u8), len(in.Pix))
	}
	for i, v := range u8 {
		in.Pix[i] = float32(v) / 255
	}
	return in
}

func forwardDisp0(t testing.TB, w *Weights, in *planar.Image) []float32 {
	net, err := NewNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	o, err := net.Forward(in)
	if err != nil {
		t.Fatal(err)
	}
	return slices.Clone(o[0].Pix)
}

// loadF32Original reads the F32 weights of a weights file or of a training
// checkpoint: the tensors named as the architecture's parameters (package
// model cannot import model/train).
func loadF32Original(t testing.TB, path string) *Weights {
	ts, meta, err := safetensors.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	c, err := configFromMetadata(meta)
	if err != nil {
		t.Fatal(err)
	}
	a, err := Build(c)
	if err != nil {
		t.Fatal(err)
	}
	var params []safetensors.Tensor
	for _, x := range ts {
		if _, ok := a.Param(x.Name); ok {
			params = append(params, x)
		}
	}
	w, err := WeightsFromTensors(params, meta)
	if err != nil {
		t.Fatal(err)
	}
	return w
}

// TestDefaultF16 checks that storing the default weights as F16 moves the
// network's output by at most 1e-3 of the width (the budget of the issue
// that introduced F16 storage): the embedded weights' disp0 on the demo
// image against the committed output of their F32 original. The reference
// names the SHA-256 of the embedded file it was made for, so new weights
// without a new reference fail. Rewrite it with
//
//	go test ./model -run TestDefaultF16 -f32-weights ../training/default/checkpoint.safetensors
//
// which first checks that the embedded weights are exactly that file's
// weights rounded to F16.
func TestDefaultF16(t *testing.T) {
	def, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	sum := sha256.Sum256(defaultWeights)
	digest := hex.EncodeToString(sum[:])
	in := demoInput(t)
	if *f32Weights != "" {
		f32 := loadF32Original(t, *f32Weights)
		for name, v := range f32.Params {
			h := def.Params[name]
			for i := range v {
				if want := safetensors.Float16From(safetensors.Float16Bits(v[i])); h[i] != want {
					t.Fatalf("%s[%d]: embedded %v, F16 of %s %v: not the embedded weights' original", name, i, h[i], *f32Weights, want)
				}
			}
		}
		a, err := Build(def.Config)
		if err != nil {
			t.Fatal(err)
		}
		sh, _ := a.Shape(a.Outputs[0])
		ref := []safetensors.Tensor{{Name: "disp0", Shape: []int{sh.C, sh.H, sh.W}, Data: forwardDisp0(t, f32, in)}}
		meta := map[string]string{
			"weights_sha256": digest,
			"source":         "F32 weights of " + filepath.Base(*f32Weights) + " at step " + f32.Provenance["train.steps"],
			"input":          "testdata/infer/input_u8.bin / 255 (the demo image)",
			"made_by":        "go test ./model -run TestDefaultF16 -f32-weights FILE",
		}
		if err := safetensors.WriteFile(f32Reference, ref, meta, safetensors.F32); err != nil {
			t.Fatal(err)
		}
	}
	ts, meta, err := safetensors.ReadFile(f32Reference)
	if err != nil {
		t.Fatal(err)
	}
	if meta["weights_sha256"] != digest {
		t.Fatalf("%s belongs to other weights (SHA-256 %s, the embedded file's %s): rewrite it with -f32-weights", f32Reference, meta["weights_sha256"], digest)
	}
	got := forwardDisp0(t, def, in)
	if len(ts) != 1 || ts[0].Name != "disp0" || len(ts[0].Data) != len(got) {
		t.Fatalf("%s holds %d tensors; want disp0 with %d values", f32Reference, len(ts), len(got))
	}
	want := ts[0].Data
	worst, lo, hi := 0.0, math.Inf(1), math.Inf(-1)
	for i := range want {
		worst = max(worst, math.Abs(float64(got[i]-want[i])))
		lo, hi = min(lo, float64(want[i])), max(hi, float64(want[i]))
	}
	t.Logf("F32 disp0 in [%.4f, %.4f] (%s); largest F16 - F32 difference %.3g", lo, hi, meta["source"], worst)
	if worst > 1e-3 {
		t.Errorf("F16 storage moves disp0 by %g > 1e-3", worst)
	}
	// The comparison means something only if the heads are not saturated.
	if hi-lo < 0.01 {
		t.Errorf("disp0 spans only [%v, %v]: the heads are saturated", lo, hi)
	}
}
