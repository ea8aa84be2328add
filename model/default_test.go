package model

import (
	"bytes"
	"flag"
	"github.com/parallaxdepth/parallax/safetensors"
	"math"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

var (
	writePlaceholder = flag.Bool("write-placeholder", false, "rewrite model/weights/default.safetensors with the untrained placeholder")
	fp32Weights      = flag.String("fp32-weights", "", "an safetensors.F32 weights file whose safetensors.F16 copy is the embedded default; checked by TestDefaultF16")
)

// placeholder returns the untrained placeholder in F32.
func placeholder(t testing.TB) *Weights {
	w, err := NewWeights(Config{}, PlaceholderSeed)
	if err != nil {
		t.Fatal(err)
	}
	w.Provenance = map[string]string{
		ProvenanceStatus: StatusPlaceholder,
		"made_by":        "model.NewWeights(model.Config{}, 1) stored as safetensors.F16 by: go test ./model -run TestDefaultPlaceholder -write-placeholder",
		"note":           "never trained: its depth is meaningless; replace with trained weights",
	}
	return w
}

// TestDefaultPlaceholder checks that the embedded weights load and, while
// they are the placeholder, that they are exactly the F16 copy of the
// deterministic initialisation, so anyone can rebuild them.
func TestDefaultPlaceholder(t *testing.T) {
	if *writePlaceholder {
		if err := placeholder(t).Save(filepath.Join("weights", "default.safetensors"), safetensors.F16); err != nil {
			t.Fatal(err)
		}
	}
	w, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if len(defaultWeights) > 8<<20 {
		t.Errorf("embedded weights are %d bytes, the budget is 8 MB", len(defaultWeights))
	}
	if !w.IsPlaceholder() {
		t.Logf("embedded weights are not the placeholder: %v", w.Provenance)
		return
	}
	var buf bytes.Buffer
	if err := placeholder(t).Encode(&buf, safetensors.F16); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(buf.Bytes(), defaultWeights) {
		t.Error("the embedded placeholder differs from NewWeights(Config{}, PlaceholderSeed) in safetensors.F16: rerun with -write-placeholder")
	}
	// Default returns a copy: changing it leaves the next one alone.
	w.Params["head0.bias"][0] = 42
	w2, _ := Default()
	if w2.Params["head0.bias"][0] == 42 {
		t.Error("Default shares its tensors between calls")
	}
}

// TestDefaultF16 checks that storing the weights as F16 moves the network's
// output by at most 1e-3 (a fraction of the width, the budget of the issue)
// on the demo-like input: the F32 weights are the placeholder's
// initialisation, or the file given with -fp32-weights when the embedded
// default has been trained.
func TestDefaultF16(t *testing.T) {
	f32 := placeholder(t)
	def, err := Default()
	if err != nil {
		t.Fatal(err)
	}
	if *fp32Weights != "" {
		if f32, err = Load(*fp32Weights); err != nil {
			t.Fatal(err)
		}
	} else if !def.IsPlaceholder() {
		t.Skip("the embedded weights are trained; pass -fp32-weights FILE with their safetensors.F32 original")
	}
	for name, v := range f32.Params {
		h := def.Params[name]
		for i := range v {
			if want := safetensors.Float16From(safetensors.Float16Bits(v[i])); h[i] != want {
				t.Fatalf("%s[%d]: embedded %v, safetensors.F16 of the safetensors.F32 weights %v", name, i, h[i], want)
			}
		}
	}
	in := testImage(t, def.Config)
	outs := make([][]float32, 2)
	for k, w := range []*Weights{f32, def} {
		net, err := NewNet(w, 1)
		if err != nil {
			t.Fatal(err)
		}
		o, err := net.Forward(in)
		if err != nil {
			t.Fatal(err)
		}
		outs[k] = append([]float32(nil), o[0].Pix...)
	}
	worst, lo, hi := 0.0, math.Inf(1), math.Inf(-1)
	for i := range outs[0] {
		worst = max(worst, math.Abs(float64(outs[0][i]-outs[1][i])))
		lo, hi = min(lo, float64(outs[0][i])), max(hi, float64(outs[0][i]))
	}
	t.Logf("disp0 in [%.4f, %.4f]; largest safetensors.F16 - safetensors.F32 difference %.3g", lo, hi, worst)
	if worst > 1e-3 {
		t.Errorf("F16 storage moves disp0 by %g > 1e-3", worst)
	}
	// The comparison means something only if the heads are not saturated.
	if hi-lo < 1e-3 {
		t.Errorf("disp0 spans only [%v, %v]: the heads are saturated", lo, hi)
	}
}

// testImage is a deterministic smooth colour image at the network's size.
func testImage(t testing.TB, c Config) *planar.Image {
	c = c.WithDefaults()
	in := planar.New(1, 3, c.Height, c.Width)
	for ch := range 3 {
		for y := range c.Height {
			for x := range c.Width {
				v := 0.5 + 0.4*math.Sin(float64(x)*0.07*float64(ch+1)+float64(y)*0.05)*math.Cos(float64(y)*0.03*float64(3-ch))
				in.Set(0, ch, y, x, float32(v))
			}
		}
	}
	return in
}
