package model

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"runtime"
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

func encode(t testing.TB, w *Weights, d DType) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := w.Encode(&b, d); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestWeightsRoundTrip(t *testing.T) {
	w := tinyWeights(t)
	for _, d := range []DType{F32, F16} {
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
				if d == F16 {
					want = Float16From(Float16Bits(v[i]))
				}
				if g[i] != want {
					t.Fatalf("%s: %s[%d] = %v, want %v", d, name, i, g[i], want)
				}
			}
		}
	}
	if len(encode(t, w, F16)) >= len(encode(t, w, F32))*6/10 {
		t.Error("F16 file is not about half the F32 file")
	}
}

// TestTorchFixture reads files written by testdata/model/gen_st.py from
// PyTorch 1.13 tensors (Debian python3-torch; torch.__version__ reports
// 1.13.0a0) and compares every value bit for bit. The F16 file holds
// torch's own .half() conversion, so it also checks Float16Bits against
// torch on every weight.
func TestTorchFixture(t *testing.T) {
	dir := filepath.Join("..", "testdata", "model")
	vb, err := os.ReadFile(filepath.Join(dir, "tiny_values.json"))
	if err != nil {
		t.Fatal(err)
	}
	var values map[string]map[string][]uint32
	if err := json.Unmarshal(vb, &values); err != nil {
		t.Fatal(err)
	}
	a, err := Build(tinyConfig)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct{ file, key string }{{"tiny_f32.safetensors", "f32"}, {"tiny_f16.safetensors", "f16"}} {
		w, err := Load(filepath.Join(dir, tc.file))
		if err != nil {
			t.Fatalf("%s: %v", tc.file, err)
		}
		if !strings.HasPrefix(w.Provenance["source"], "testdata/model/gen_st.py") {
			t.Errorf("%s: provenance %v", tc.file, w.Provenance)
		}
		want := values[tc.key]
		if len(want) != len(a.Params) {
			t.Fatalf("%s: fixture has %d tensors, architecture %d", tc.key, len(want), len(a.Params))
		}
		for _, p := range a.Params {
			g, ok := w.Params[p.Name]
			if !ok || len(g) != len(want[p.Name]) {
				t.Fatalf("%s: %s: %d values, want %d", tc.file, p.Name, len(g), len(want[p.Name]))
			}
			for i, bits := range want[p.Name] {
				if math.Float32bits(g[i]) != bits {
					t.Fatalf("%s: %s[%d] = %v, torch %v", tc.file, p.Name, i, g[i], math.Float32frombits(bits))
				}
			}
		}
	}
	// Our conversion of torch's float32 values must give torch's halves.
	b, err := os.ReadFile(filepath.Join(dir, "tiny_f16.safetensors"))
	if err != nil {
		t.Fatal(err)
	}
	_, ts, err := ReadSafetensors(b)
	if err != nil {
		t.Fatal(err)
	}
	for _, st := range ts {
		for i, bits := range values["f32"][st.Name] {
			if got, want := Float16Bits(math.Float32frombits(bits)), binary.LittleEndian.Uint16(st.raw[2*i:]); got != want {
				t.Fatalf("%s[%d]: Float16Bits = %#04x, torch .half() %#04x", st.Name, i, got, want)
			}
		}
	}
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

func meta(h map[string]any) map[string]any { return h[metadataKey].(map[string]any) }

func TestDecodeRejects(t *testing.T) {
	w := tinyWeights(t)
	good := encode(t, w, F32)
	a, _ := Build(tinyConfig)
	first, second := a.Params[0].Name, a.Params[1].Name // enc1a.weight, enc1a.bias

	// Files missing or adding a tensor are written whole, so that the data
	// section stays tiled.
	write := func(edit func(ts []Tensor) []Tensor) []byte {
		ts, m, err := w.Tensors()
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := WriteSafetensors(&buf, m, edit(ts), F32); err != nil {
			t.Fatal(err)
		}
		return buf.Bytes()
	}
	hugeLen := append([]byte(nil), good...)
	binary.LittleEndian.PutUint64(hugeLen, 1<<62)

	for _, tc := range []struct {
		name string
		b    []byte
		want string
	}{
		{"empty", nil, "truncated"},
		{"short", good[:5], "truncated"},
		{"header cut", good[:100], "exceeds the file"},
		{"data cut", good[:len(good)-4], "outside the data section"},
		{"trailing bytes", append(append([]byte(nil), good...), 0, 0, 0, 0), "data section has"},
		{"header length beyond file", hugeLen, "exceeds the file"},
		{"not JSON", append(binary.LittleEndian.AppendUint64(nil, 8), "12345678"...), "JSON object"},
		{"overlap", rewrite(t, good, func(h map[string]any) []byte {
			e := entry(h, second)
			off := e["data_offsets"].([]any)
			e["data_offsets"] = []any{off[0].(float64) - 4, off[1].(float64) - 4}
			return nil
		}), "overlaps"},
		{"out of range", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["data_offsets"] = []any{1e9, 1e9 + 432*4}
			return nil
		}), "outside the data section"},
		{"begin after end", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["data_offsets"] = []any{8, 4}
			return nil
		}), "outside the data section"},
		{"wrong dtype", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["dtype"] = "I32"
			return nil
		}), `"enc1a.weight" has dtype "I32"`},
		{"size vs shape", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{4, 3, 3, 2}
			return nil
		}), `"enc1a.weight": shape [4 3 3 2]`},
		{"negative dim", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{-4, 3, 3, 3}
			return nil
		}), "invalid dimension -4"},
		{"huge dims", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{1 << 40, 1 << 40, 1 << 40}
			return nil
		}), "larger than the data section"},
		{"wrong shape for arch", rewrite(t, good, func(h map[string]any) []byte {
			entry(h, first)["shape"] = []any{3, 4, 3, 3}
			return nil
		}), `tensor "enc1a.weight" has shape [3 4 3 3], the architecture wants [4 3 3 3]`},
		{"missing tensor", write(func(ts []Tensor) []Tensor { return ts[1:] }), `tensor "enc1a.weight" is missing`},
		{"unexpected tensor", write(func(ts []Tensor) []Tensor {
			return append(ts, Tensor{Name: "extra.weight", Shape: []int{2}, Data: []float32{1, 2}})
		}), `unexpected tensor "extra.weight"`},
		{"non-finite", write(func(ts []Tensor) []Tensor {
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
			delete(h, metadataKey)
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

func TestDecodeBoundedAllocation(t *testing.T) {
	// Hostile headers that claim enormous tensors must fail before any
	// large allocation.
	for _, h := range []string{
		`{"a":{"dtype":"F32","shape":[1099511627776,1099511627776],"data_offsets":[0,4]}}`,
		`{"a":{"dtype":"F32","shape":[4],"data_offsets":[0,18446744073709551615]}}`,
		`{"a":{"dtype":"F32","shape":[4611686018427387904],"data_offsets":[0,16]}}`,
	} {
		b := append(binary.LittleEndian.AppendUint64(nil, uint64(len(h))), h...)
		b = append(b, make([]byte, 16)...)
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		_, err := Decode(b)
		runtime.ReadMemStats(&after)
		if err == nil {
			t.Errorf("%s: no error", h)
		}
		if d := after.TotalAlloc - before.TotalAlloc; d > 1<<20 {
			t.Errorf("%s: allocated %d bytes", h, d)
		}
	}
}

func TestSaveAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "w.safetensors")
	w := tinyWeights(t)
	if err := w.Save(path, F16); err != nil {
		t.Fatal(err)
	}
	first, _ := os.ReadFile(path)
	if !bytes.Equal(first, encode(t, w, F16)) {
		t.Fatal("saved file differs from Encode")
	}
	// A failing save leaves the old file and no temporary behind.
	bad := tinyWeights(t)
	bad.Params["enc1a.bias"][0] = float32(math.NaN())
	if err := bad.Save(path, F32); err == nil || !strings.Contains(err.Error(), "enc1a.bias") {
		t.Fatalf("saving NaN weights: %v", err)
	}
	bad.Params["enc1a.bias"][0] = 0
	delete(bad.Params, "head0.bias")
	if err := bad.Save(path, F32); err == nil || !strings.Contains(err.Error(), `"head0.bias" is missing`) {
		t.Fatalf("saving incomplete weights: %v", err)
	}
	if err := w.Save(filepath.Join(dir, "no", "such", "dir.safetensors"), F32); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
		t.Fatalf("saving into a missing directory: %v", err)
	}
	if now, _ := os.ReadFile(path); !bytes.Equal(now, first) {
		t.Fatal("a failed save changed the file")
	}
	if err := w.Save(path, F32); err != nil {
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
	w := tinyWeights(f)
	good := encode(f, w, F16)
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
		if err := got.Encode(&buf, F32); err != nil {
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

func TestLoadRejectsHugeFile(t *testing.T) {
	// A sparse file larger than MaxFileSize is refused before it is read.
	path := filepath.Join(t.TempDir(), "huge.safetensors")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	if err := f.Truncate(MaxFileSize + 1); err != nil {
		f.Close()
		t.Skipf("cannot make a sparse file: %v", err)
	}
	f.Close()
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err = Load(path)
	runtime.ReadMemStats(&after)
	if err == nil || !strings.Contains(err.Error(), "more than the limit") {
		t.Fatalf("Load: %v", err)
	}
	if d := after.TotalAlloc - before.TotalAlloc; d > 1<<20 {
		t.Errorf("refusing the file allocated %d bytes", d)
	}
}

func TestSafetensorsGeneric(t *testing.T) {
	// A file holding more than weights (as a training checkpoint would):
	// the weights' tensors and metadata plus tensors and keys of its own.
	w := tinyWeights(t)
	ts, meta, err := w.Tensors()
	if err != nil {
		t.Fatal(err)
	}
	meta["step"] = "1200"
	extra := []Tensor{
		{Name: "solver.step", Shape: []int{}, Data: []float32{1200}},
		{Name: "solver.empty", Shape: []int{0, 3}, Data: []float32{}},
		{Name: "solver.m/enc1a.bias", Shape: []int{4}, Data: []float32{1, -2, 3.5, 1e-30}},
	}
	path := filepath.Join(t.TempDir(), "ckpt.safetensors")
	if err := SaveSafetensors(path, meta, append(append([]Tensor(nil), ts...), extra...), F32); err != nil {
		t.Fatal(err)
	}
	gotMeta, got, err := LoadSafetensors(path)
	if err != nil {
		t.Fatal(err)
	}
	if gotMeta["step"] != "1200" || len(got) != len(ts)+len(extra) {
		t.Fatalf("metadata %v, %d tensors", gotMeta["step"], len(got))
	}
	var weights []Tensor
	byName := map[string]Tensor{}
	for _, g := range got {
		byName[g.Name] = g
		if g.DType != F32 {
			t.Errorf("%s read as %s", g.Name, g.DType)
		}
		if !strings.HasPrefix(g.Name, "solver.") {
			weights = append(weights, g)
		}
	}
	for _, e := range extra {
		g := byName[e.Name]
		if !equalInts(g.Shape, e.Shape) || len(g.Data) != len(e.Data) {
			t.Fatalf("%s: shape %v, %d values", e.Name, g.Shape, len(g.Data))
		}
		for i := range e.Data {
			if g.Data[i] != e.Data[i] {
				t.Fatalf("%s[%d] = %v, want %v", e.Name, i, g.Data[i], e.Data[i])
			}
		}
	}
	w2, err := WeightsFromTensors(gotMeta, weights)
	if err != nil {
		t.Fatal(err)
	}
	if w2.Params["head0.bias"][1] != w.Params["head0.bias"][1] {
		t.Error("weights changed in the round trip")
	}
	if _, err := WeightsFromTensors(gotMeta, got); err == nil || !strings.Contains(err.Error(), `unexpected tensor "solver.`) {
		t.Errorf("WeightsFromTensors with solver tensors: %v", err)
	}
	if _, err := WeightsFromTensors(gotMeta, append(weights, weights[0])); err == nil || !strings.Contains(err.Error(), "appears twice") {
		t.Errorf("WeightsFromTensors with a repeated tensor: %v", err)
	}
	// Writing checks lengths and names.
	for _, bad := range [][]Tensor{
		{{Name: "a", Shape: []int{3}, Data: []float32{1, 2}}},
		{{Name: "a", Shape: []int{1}, Data: []float32{1}}, {Name: "a", Shape: []int{1}, Data: []float32{1}}},
		{{Name: metadataKey, Shape: []int{1}, Data: []float32{1}}},
		{{Name: "a", Shape: []int{-1}, Data: nil}},
	} {
		if err := SaveSafetensors(path, nil, bad, F16); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("SaveSafetensors(%v) = %v", bad, err)
		}
	}
	// The torch fixture reads with its stored dtype.
	_, ft, err := LoadSafetensors(filepath.Join("..", "testdata", "model", "tiny_f16.safetensors"))
	if err != nil || ft[0].DType != F16 {
		t.Fatalf("F16 fixture: %v", err)
	}
}

// TestWriteSafetensorsRefuses checks inputs the writer used to accept: a
// shape whose product overflows (to 0, matching empty Data, so the file
// claimed a 2^124-value tensor) and names or metadata that are not valid
// UTF-8 (encoding/json replaces such bytes with U+FFFD, so a name changed
// on the way through a file). A nil *Weights is an error too.
func TestWriteSafetensorsRefuses(t *testing.T) {
	for _, tc := range []struct {
		name string
		meta map[string]string
		ts   []Tensor
		want string
	}{
		{"overflow", nil, []Tensor{{Name: "a", Shape: []int{1 << 62, 1 << 62}}}, "overflows"},
		{"name", nil, []Tensor{{Name: "a\xff", Shape: []int{1}, Data: []float32{1}}}, "UTF-8"},
		{"metadata key", map[string]string{"\xfe": "v"}, nil, "UTF-8"},
		{"metadata value", map[string]string{"k": "v\xfe"}, nil, "UTF-8"},
	} {
		err := WriteSafetensors(&bytes.Buffer{}, tc.meta, tc.ts, F32)
		if err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want one containing %q", tc.name, err, tc.want)
		}
	}
	// A zero dimension after a large one is a valid empty tensor, which
	// the reader accepts too (it refused it before).
	var b bytes.Buffer
	if err := WriteSafetensors(&b, nil, []Tensor{{Name: "e", Shape: []int{1 << 40, 0}}, {Name: "f", Shape: []int{1 << 62, 1 << 62, 0}}}, F32); err != nil {
		t.Fatalf("empty tensor: %v", err)
	}
	if _, ts, err := ReadSafetensors(b.Bytes()); err != nil || len(ts) != 2 || ts[0].Shape[0] != 1<<40 || len(ts[0].Data) != 0 || len(ts[1].Data) != 0 {
		t.Errorf("empty tensor read back: %+v %v", ts, err)
	}
	var w *Weights
	for name, err := range map[string]error{
		"Check":  w.Check(),
		"Encode": w.Encode(&bytes.Buffer{}, F32),
		"Save":   w.Save(filepath.Join(t.TempDir(), "w.safetensors"), F32),
	} {
		if err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("nil weights %s: %v", name, err)
		}
	}
}
