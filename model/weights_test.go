package model

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"github.com/parallaxdepth/parallax/safetensors"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strings"
	"testing"
)

func tinyWeights(t testing.TB) *Weights {
	t.Helper()
	w, err := NewWeights(tinyConfig, 1)
	if err != nil {
		t.Fatal(err)
	}
	// Non-zero biases, so a swapped weight/bias would show.
	for name, v := range w.Params {
		if strings.HasSuffix(name, ".bias") {
			for i := range v {
				v[i] = float32(i+1) * 0.01
			}
		}
	}
	w.Provenance["data"] = "unit test"
	w.Provenance["steps"] = "0"
	return w
}

func encode(t testing.TB, w *Weights, d safetensors.DType) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := w.Encode(&b, d); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestWeightsRoundTrip(t *testing.T) {
	w := tinyWeights(t)
	for _, d := range []safetensors.DType{safetensors.F32, safetensors.F16} {
		b := encode(t, w, d)
		if n := binary.LittleEndian.Uint64(b); n%8 != 0 {
			t.Errorf("%s: header length %d is not a multiple of 8", d, n)
		}
		got, err := Decode(b)
		if err != nil {
			t.Fatalf("%s: %v", d, err)
		}
		if got.Config.Width != 128 || got.Config.DMax != 0.25 || got.Config.Encoder[2] != 8 {
			t.Errorf("%s: config %+v", d, got.Config)
		}
		if got.Provenance["data"] != "unit test" || got.Provenance["steps"] != "0" || len(got.Provenance) != 2 {
			t.Errorf("%s: provenance %v", d, got.Provenance)
		}
		for name, v := range w.Params {
			g := got.Params[name]
			if len(g) != len(v) {
				t.Fatalf("%s: %s has %d values, want %d", d, name, len(g), len(v))
			}
			for i := range v {
				want := v[i]
				if d == safetensors.F16 {
					want = safetensors.Float16From(safetensors.Float16Bits(v[i]))
				}
				if g[i] != want {
					t.Fatalf("%s: %s[%d] = %v, want %v", d, name, i, g[i], want)
				}
			}
		}
	}
	if len(encode(t, w, safetensors.F16)) >= len(encode(t, w, safetensors.F32))*6/10 {
		t.Error("F16 file is not about half the safetensors.F32 file")
	}
}

// TestTorchFixture loads the weights files that testdata/model/gen_st.py
// wrote from PyTorch 1.13 tensors (Debian python3-torch) with the metadata
// of this package: every parameter must hold its tensor's values bit for
// bit (package safetensors checks those values against torch's).
func TestTorchFixture(t *testing.T) {
	a, err := Build(tinyConfig)
	if err != nil {
		t.Fatal(err)
	}
	for _, file := range []string{"tiny_f32.safetensors", "tiny_f16.safetensors"} {
		path := filepath.Join("..", "testdata", "model", file)
		w, err := Load(path)
		if err != nil {
			t.Fatalf("%s: %v", file, err)
		}
		if !strings.HasPrefix(w.Provenance["source"], "testdata/model/gen_st.py") {
			t.Errorf("%s: provenance %v", file, w.Provenance)
		}
		ts, _, err := safetensors.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if len(ts) != len(a.Params) || len(w.Params) != len(a.Params) {
			t.Fatalf("%s: %d tensors, %d parameters, the architecture %d", file, len(ts), len(w.Params), len(a.Params))
		}
		for _, st := range ts {
			if !slices.Equal(math32bits(w.Params[st.Name]), math32bits(st.Data)) {
				t.Fatalf("%s: parameter %s differs from its tensor", file, st.Name)
			}
		}
	}
}

func math32bits(v []float32) []uint32 {
	b := make([]uint32, len(v))
	for i, x := range v {
		b[i] = math.Float32bits(x)
	}
	return b
}

// rewrite parses the header of a weights file, lets edit change it, and
// returns the file with the new header and the old data section.
func rewrite(t *testing.T, b []byte, edit func(h map[string]any) []byte) []byte {
	t.Helper()
	n := binary.LittleEndian.Uint64(b)
	var h map[string]any
	if err := json.Unmarshal(b[8:8+n], &h); err != nil {
		t.Fatal(err)
	}
	data := b[8+n:]
	if d := edit(h); d != nil {
		data = d
	}
	hb, err := json.Marshal(h)
	if err != nil {
		t.Fatal(err)
	}
	out := binary.LittleEndian.AppendUint64(nil, uint64(len(hb)))
	return append(append(out, hb...), data...)
}

func entry(h map[string]any, name string) map[string]any { return h[name].(map[string]any) }

func meta(h map[string]any) map[string]any { return h[safetensors.MetadataKey].(map[string]any) }

func TestDecodeRejects(t *testing.T) {
	w := tinyWeights(t)
	good := encode(t, w, safetensors.F32)
	a, _ := Build(tinyConfig)
	first, second := a.Params[0].Name, a.Params[1].Name // enc1a.weight, enc1a.bias

	// Files missing or adding a tensor are written whole, so that the data
	// section stays tiled.
	write := func(edit func(ts []safetensors.Tensor) []safetensors.Tensor) []byte {
		ts, m, err := w.Tensors()
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := safetensors.Write(&buf, edit(ts), m, safetensors.F32); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}

	for _, tc := range []struct {
		name string
		b    []byte
		want string
	}{
		{"data cut", good[:len(good)-4], "outside the data section"},
		{"overlap", rewrite(t, good, func(h map[string]any) []byte {
			e := entry(h, second)
			off := e["data_offsets"].([]any)
			e["data_offsets"] = []any{off[0].(float64) - 4, off[1].(float64) - 4}
			return nil
		}), "overlaps"},
		{"wrong dtype", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["dtype"] = "I32"
			return nil
		}), `"enc1a.weight" has dtype "I32"`},
		{"size vs shape", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{4, 3, 3, 2}
			return nil
		}), `"enc1a.weight": shape [4 3 3 2]`},
		{"wrong shape for arch", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{3, 4, 3, 3}
			return nil
		}), `tensor "enc1a.weight" has shape [3 4 3 3], the architecture wants [4 3 3 3]`},
		{"missing tensor", write(func(ts []safetensors.Tensor) []safetensors.Tensor { return ts[1:] }), `tensor "enc1a.weight" is missing`},
		{"unexpected tensor", write(func(ts []safetensors.Tensor) []safetensors.Tensor {
			return append(ts, safetensors.Tensor{Name: "extra.weight", Shape: []int{2}, Data: []float32{1, 2}})
		}), `unexpected tensor "extra.weight"`},
		{"non-finite", write(func(ts []safetensors.Tensor) []safetensors.Tensor {
			ts[1].Data = append([]float32(nil), ts[1].Data...)
			ts[1].Data[2] = float32(math.Inf(1))
			return ts
		}), `"enc1a.bias" has a non-finite value +Inf at index 2`},
		{"format version", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["format_version"] = "2"
			return nil
		}), `unsupported format_version "2"`},
		{"no format version", rewrite(t, good, func(h map[string]any) []byte {
			delete(meta(h), "format_version")
			return nil
		}), `"format_version" is missing`},
		{"no metadata", rewrite(t, good, func(h map[string]any) []byte {
			delete(h, safetensors.MetadataKey)
			return nil
		}), "no __metadata__"},
		{"metadata not strings", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["input_width"] = 64
			return nil
		}), "__metadata__ must map strings to strings"},
		{"width disagrees", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["input_width"] = "256"
			return nil
		}), `"input_width" is "256" but the config says "128"`},
		{"bad config", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["config"] = `{"width": 65}`
			return nil
		}), "width 65"},
		{"unknown config field", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["config"] = `{"widht": 128}`
			return nil
		}), `unknown field "widht"`},
		{"other architecture", rewrite(t, good, func(h map[string]any) []byte {
			meta(h)["arch"] = "other"
			return nil
		}), `"arch" is "other"`},
		{"duplicate key", func() []byte {
			n := binary.LittleEndian.Uint64(good)
			h := string(good[8 : 8+n])
			i := strings.Index(h, `"`+first+`"`)
			j := strings.Index(h[i:], "},") + i + 2
			dup := strings.TrimRight(h[:len(strings.TrimRight(h, " "))-1]+","+h[i:j-1], " ") + "}"
			out := binary.LittleEndian.AppendUint64(nil, uint64(len(dup)))
			return append(append(out, dup...), good[8+n:]...)
		}(), `key "enc1a.weight" appears twice`},
	} {
		_, err := Decode(tc.b)
		if err == nil {
			t.Errorf("%s: no error", tc.name)
			continue
		}
		if !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q, want one containing %q", tc.name, err, tc.want)
		}
	}
}

func TestSaveAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "w.safetensors")
	w := tinyWeights(t)
	if err := w.Save(path, safetensors.F16); err != nil {
		t.Fatal(err)
	}
	first, _ := os.ReadFile(path)
	if !bytes.Equal(first, encode(t, w, safetensors.F16)) {
		t.Fatal("saved file differs from Encode")
	}
	// A failing save leaves the old file and no temporary behind.
	bad := tinyWeights(t)
	bad.Params["enc1a.bias"][0] = float32(math.NaN())
	if err := bad.Save(path, safetensors.F32); err == nil || !strings.Contains(err.Error(), "enc1a.bias") {
		t.Fatalf("saving NaN weights: %v", err)
	}
	bad.Params["enc1a.bias"][0] = 0
	delete(bad.Params, "head0.bias")
	if err := bad.Save(path, safetensors.F32); err == nil || !strings.Contains(err.Error(), `"head0.bias" is missing`) {
		t.Fatalf("saving incomplete weights: %v", err)
	}
	if err := w.Save(filepath.Join(dir, "no", "such", "dir.safetensors"), safetensors.F32); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Fatalf("saving into a missing directory: %v", err)
	}
	if now, _ := os.ReadFile(path); !bytes.Equal(now, first) {
		t.Fatal("a failed save changed the file")
	}
	if err := w.Save(path, safetensors.F32); err != nil {
		t.Fatal(err)
	}
	got, err := Load(path)
	if err != nil || got.Params["head0.bias"][1] != w.Params["head0.bias"][1] {
		t.Fatalf("Load after overwrite: %v", err)
	}
	ents, _ := os.ReadDir(dir)
	if len(ents) != 1 {
		t.Fatalf("directory holds %d entries, want only the weights file", len(ents))
	}
	if _, err := Load(filepath.Join(dir, "missing.safetensors")); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Fatalf("Load of a missing file: %v", err)
	}
	if err := w.Encode(new(bytes.Buffer), "BF16"); err == nil {
		t.Fatal("Encode accepted dtype BF16")
	}
}

func FuzzDecode(f *testing.F) {
	// The smallest network (one channel a level, 415 parameters) keeps the
	// valid seed small, so the fuzzer spends its time on many inputs.
	one := []int{1, 1, 1, 1, 1}
	w, err := NewWeights(Config{Width: 64, Height: 64, Encoder: one, Decoder: one}, 1)
	if err != nil {
		f.Fatal(err)
	}
	good := encode(f, w, safetensors.F16)
	f.Add(good)
	f.Add(good[:len(good)/2])
	f.Add([]byte{})
	f.Add(append(binary.LittleEndian.AppendUint64(nil, 2), "{}"...))
	h := `{"__metadata__":{"format":"parallax-weights"},"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`
	f.Add(append(append(binary.LittleEndian.AppendUint64(nil, uint64(len(h))), h...), 1, 2, 3, 4))
	f.Fuzz(func(t *testing.T, b []byte) {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		got, err := Decode(b)
		runtime.ReadMemStats(&after)
		// Decoding allocates the JSON tokens and the float32 values: a small
		// multiple of the input.
		if d := after.TotalAlloc - before.TotalAlloc; d > 64*uint64(len(b))+1<<20 {
			t.Fatalf("Decode of %d bytes allocated %d", len(b), d)
		}
		if err != nil {
			if !strings.HasPrefix(err.Error(), "model: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		// Whatever decodes must survive a round trip.
		var buf bytes.Buffer
		if err := got.Encode(&buf, safetensors.F32); err != nil {
			t.Fatal(err)
		}
		again, err := Decode(buf.Bytes())
		if err != nil {
			t.Fatal(err)
		}
		for k, v := range got.Params {
			for i := range v {
				if again.Params[k][i] != v[i] {
					t.Fatalf("%s[%d] changed in a round trip", k, i)
				}
			}
		}
	})
}

// TestWeightsInLargerFile checks the path of a file that holds more than
// weights (as a training checkpoint does): the weights' tensors and
// metadata plus tensors and keys of its own, read back with
// WeightsFromTensors from the weights' part.
func TestWeightsInLargerFile(t *testing.T) {
	w := tinyWeights(t)
	ts, meta, err := w.Tensors()
	if err != nil {
		t.Fatal(err)
	}
	meta["step"] = "1200"
	extra := []safetensors.Tensor{
		{Name: "solver.step", Shape: []int{}, Data: []float32{1200}},
		{Name: "solver.m/enc1a.bias", Shape: []int{4}, Data: []float32{1, -2, 3.5, 1e-30}},
	}
	var buf bytes.Buffer
	if err := safetensors.Write(&buf, append(append([]safetensors.Tensor(nil), ts...), extra...), meta, safetensors.F32); err != nil {
		t.Fatal(err)
	}
	got, gotMeta, err := safetensors.Parse(buf.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	var weights []safetensors.Tensor
	for _, g := range got {
		if !strings.HasPrefix(g.Name, "solver.") {
			weights = append(weights, g)
		}
	}
	w2, err := WeightsFromTensors(weights, gotMeta)
	if err != nil {
		t.Fatal(err)
	}
	for name, v := range w.Params {
		if !slices.Equal(w2.Params[name], v) {
			t.Fatalf("%s changed in the round trip", name)
		}
	}
	if _, err := WeightsFromTensors(got, gotMeta); err == nil || !strings.Contains(err.Error(), `unexpected tensor "solver.`) {
		t.Errorf("WeightsFromTensors with solver tensors: %v", err)
	}
	if _, err := WeightsFromTensors(append(weights, weights[0]), gotMeta); err == nil || !strings.Contains(err.Error(), "appears twice") {
		t.Errorf("WeightsFromTensors with a repeated tensor: %v", err)
	}
}

func TestNilWeights(t *testing.T) {
	var w *Weights
	for name, err := range map[string]error{
		"Check":  w.Check(),
		"Encode": w.Encode(&bytes.Buffer{}, safetensors.F32),
		"Save":   w.Save(filepath.Join(t.TempDir(), "w.safetensors"), safetensors.F32),
	} {
		if err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("nil weights %s: %v", name, err)
		}
	}
}

// TestDecodeRefusesHugeInput: the default weights file edited to claim a
// 4096×2048 input (in the config and in the plain fields) would make every
// Net allocate gigabytes. It must be refused from the metadata, with the
// numbers, allocating no more than parsing the file takes.
func TestDecodeRefusesHugeInput(t *testing.T) {
	huge := rewrite(t, defaultWeights, func(h map[string]any) []byte {
		m := meta(h)
		var c map[string]any
		if err := json.Unmarshal([]byte(m["config"].(string)), &c); err != nil {
			t.Fatal(err)
		}
		c["width"], c["height"] = 4096, 2048
		cj, err := json.Marshal(c)
		if err != nil {
			t.Fatal(err)
		}
		m["config"], m["input_width"], m["input_height"] = string(cj), "4096", "2048"
		return nil
	})
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err := Decode(huge)
	runtime.ReadMemStats(&after)
	if err == nil || !strings.Contains(err.Error(), "input 4096×2048 exceeds the maximum of 524288 pixels") {
		t.Fatalf("Decode: %v", err)
	}
	// Parsing converts the F16 tensors to float32: about twice the file.
	if d := after.TotalAlloc - before.TotalAlloc; d > 8*uint64(len(huge)) {
		t.Errorf("refusing the file allocated %d bytes for a file of %d", d, len(huge))
	}
	// The same config built in memory is refused by everything that
	// allocates for it.
	c := Config{Width: 4096, Height: 2048}
	if _, err := Build(c); err == nil || !strings.Contains(err.Error(), "4096×2048") {
		t.Errorf("Build: %v", err)
	}
	if _, err := NewWeights(c, 1); err == nil || !strings.Contains(err.Error(), "4096×2048") {
		t.Errorf("NewWeights: %v", err)
	}
	// The largest config allowed still builds (without allocating a Net).
	if _, err := Build(Config{Width: 1024, Height: 512}); err != nil {
		t.Errorf("Build at MaxNetPixels: %v", err)
	}
	if _, err := Build(Config{Width: 1024, Height: 544}); err == nil {
		t.Error("Build just above MaxNetPixels succeeded")
	}
}
