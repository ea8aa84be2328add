package safetensors

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"
)

// sample returns tensors of several ranks (a scalar, an empty tensor and
// values that F16 rounds) and metadata, as a checkpoint would hold them.
func sample() ([]Tensor, map[string]string) {
	ts := []Tensor{
		{Name: "conv.weight", Shape: []int{2, 3, 1, 2}, Data: make([]float32, 12)},
		{Name: "conv.bias", Shape: []int{2}, Data: []float32{0.5, -1.25}},
		{Name: "solver.step", Shape: []int{}, Data: []float32{1200}},
		{Name: "solver.empty", Shape: []int{0, 3}, Data: []float32{}},
		{Name: "solver.m/conv.bias", Shape: []int{4}, Data: []float32{1, -2, 3.5, 1e-30}},
	}
	for i := range ts[0].Data {
		ts[0].Data[i] = float32(i)/7 - 0.8
	}
	return ts, map[string]string{"step": "1200", "note": "ünïcode"}
}

func encode(t testing.TB, ts []Tensor, meta map[string]string, d DType) []byte {
	t.Helper()
	var b bytes.Buffer
	if err := Write(&b, ts, meta, d); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func TestRoundTrip(t *testing.T) {
	ts, meta := sample()
	for _, d := range []DType{F32, F16} {
		b := encode(t, ts, meta, d)
		if n := binary.LittleEndian.Uint64(b); n%8 != 0 {
			t.Errorf("%s: header length %d is not a multiple of 8", d, n)
		}
		got, gotMeta, err := Parse(b)
		if err != nil {
			t.Fatalf("%s: %v", d, err)
		}
		if len(gotMeta) != 2 || gotMeta["step"] != "1200" || gotMeta["note"] != "ünïcode" {
			t.Errorf("%s: metadata %v", d, gotMeta)
		}
		if len(got) != len(ts) {
			t.Fatalf("%s: %d tensors, want %d", d, len(got), len(ts))
		}
		byName := map[string]Tensor{}
		for _, g := range got {
			byName[g.Name] = g
		}
		for i, w := range ts {
			g := byName[w.Name]
			if g.Name != w.Name || !slices.Equal(g.Shape, w.Shape) || g.DType != d || len(g.Data) != len(w.Data) {
				t.Fatalf("%s: tensor %d is %s %v %s with %d values, want %s %v", d, i, g.Name, g.Shape, g.DType, len(g.Data), w.Name, w.Shape)
			}
			for k, v := range w.Data {
				want := v
				if d == F16 {
					want = Float16From(Float16Bits(v))
				}
				if g.Data[k] != want {
					t.Fatalf("%s: %s[%d] = %v, want %v", d, w.Name, k, g.Data[k], want)
				}
			}
		}
	}
}

// rewrite parses the header of a file, lets edit change it, and returns the
// file with the new header and the old data section.
func rewrite(t *testing.T, b []byte, edit func(h map[string]any)) []byte {
	t.Helper()
	n := binary.LittleEndian.Uint64(b)
	var h map[string]any
	if err := json.Unmarshal(b[8:8+n], &h); err != nil {
		t.Fatal(err)
	}
	edit(h)
	hb, err := json.Marshal(h)
	if err != nil {
		t.Fatal(err)
	}
	out := binary.LittleEndian.AppendUint64(nil, uint64(len(hb)))
	return append(append(out, hb...), b[8+n:]...)
}

func rawHeader(h string, data []byte) []byte {
	return append(append(binary.LittleEndian.AppendUint64(nil, uint64(len(h))), h...), data...)
}

func TestParseRejects(t *testing.T) {
	ts, meta := sample()
	good := encode(t, ts, meta, F32)
	entry := func(h map[string]any, name string) map[string]any { return h[name].(map[string]any) }
	hugeLen := append([]byte(nil), good...)
	binary.LittleEndian.PutUint64(hugeLen, 1<<62)
	n := binary.LittleEndian.Uint64(good)
	header := string(good[8 : 8+n])
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
		{"header too short", rawHeader("{", nil), "too short"},
		{"not JSON", rawHeader("12345678", nil), "JSON object"},
		{"bytes after the object", rawHeader(`{} x`, nil), "unexpected bytes"},
		{"overlap", rewrite(t, good, func(h map[string]any) {
			e := entry(h, "conv.bias")
			off := e["data_offsets"].([]any)
			e["data_offsets"] = []any{off[0].(float64) - 4, off[1].(float64) - 4}
		}), "overlaps"},
		{"gap", rewrite(t, good, func(h map[string]any) {
			delete(h, "conv.bias")
		}), "belong to no tensor"},
		{"out of range", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["data_offsets"] = []any{1e9, 1e9 + 48}
		}), "outside the data section"},
		{"begin after end", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["data_offsets"] = []any{8, 4}
		}), "outside the data section"},
		{"three offsets", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["data_offsets"] = []any{0, 24, 48}
		}), "must hold 2 numbers"},
		{"wrong dtype", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["dtype"] = "I32"
		}), `"conv.weight" has dtype "I32"`},
		{"no dtype", rewrite(t, good, func(h map[string]any) {
			delete(entry(h, "conv.weight"), "dtype")
		}), `"conv.weight" has no dtype`},
		{"no shape", rewrite(t, good, func(h map[string]any) {
			delete(entry(h, "conv.weight"), "shape")
		}), `"conv.weight" has no shape`},
		{"size vs shape", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["shape"] = []any{2, 3, 1, 1}
		}), `"conv.weight": shape [2 3 1 1]`},
		{"negative dim", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["shape"] = []any{-2, 3, 1, 2}
		}), "invalid dimension -2"},
		{"too many dims", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["shape"] = []any{1, 1, 1, 1, 1, 1, 2, 3, 2}
		}), "9 dimensions, more than 8"},
		{"huge dims", rewrite(t, good, func(h map[string]any) {
			entry(h, "conv.weight")["shape"] = []any{int64(1) << 40, int64(1) << 40, int64(1) << 40}
		}), map[bool]string{true: "larger than the data section", false: "more than an int holds"}[strconv.IntSize == 64]},
		{"dimension wraps int32", rewrite(t, good, func(h map[string]any) {
			// 2^32 + 12 is 12 in 32 bits: the tensor's own 12 values.
			entry(h, "conv.weight")["shape"] = []any{int64(1)<<32 + 12}
		}), map[bool]string{true: "larger than the data section", false: "more than an int holds"}[strconv.IntSize == 64]},
		{"metadata not strings", rewrite(t, good, func(h map[string]any) {
			h[MetadataKey].(map[string]any)["step"] = 1200
		}), "__metadata__ must map strings to strings"},
		{"key not a string", rawHeader(`{1:2}`, nil), "header"},
		{"duplicate key", rawHeader(strings.TrimRight(header, " ")[:len(strings.TrimRight(header, " "))-1]+`,"conv.bias":{"dtype":"F32","shape":[0],"data_offsets":[0,0]}}`, good[8+n:]), `key "conv.bias" appears twice`},
	} {
		_, _, err := Parse(tc.b)
		if err == nil {
			t.Errorf("%s: no error", tc.name)
			continue
		}
		if !strings.HasPrefix(err.Error(), "safetensors: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %q, want one containing %q", tc.name, err, tc.want)
		}
	}
}

// allocated returns the bytes f allocates.
func allocated(f func()) uint64 {
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	f()
	runtime.ReadMemStats(&after)
	return after.TotalAlloc - before.TotalAlloc
}

func TestParseBoundedAllocation(t *testing.T) {
	// Hostile headers that claim enormous tensors must fail before any
	// large allocation.
	for _, h := range []string{
		`{"a":{"dtype":"F32","shape":[1099511627776,1099511627776],"data_offsets":[0,4]}}`,
		`{"a":{"dtype":"F32","shape":[4],"data_offsets":[0,18446744073709551615]}}`,
		`{"a":{"dtype":"F32","shape":[4611686018427387904],"data_offsets":[0,16]}}`,
	} {
		b := rawHeader(h, make([]byte, 16))
		var err error
		if d := allocated(func() { _, _, err = Parse(b) }); d > 1<<20 {
			t.Errorf("%s: allocated %d bytes", h, d)
		}
		if err == nil {
			t.Errorf("%s: no error", h)
		}
	}
}

// TestParseManyTensors: a header of 1.5 million empty tensors (an 89 MB
// file) is refused at tensor MaxTensors+1, allocating a bounded amount (the
// MaxTensors tensors read so far), and a header of exactly MaxTensors
// tensors is accepted.
func TestParseManyTensors(t *testing.T) {
	build := func(n int) []byte {
		h := make([]byte, 0, 61*n+2)
		h = append(h, '{')
		for i := range n {
			if i > 0 {
				h = append(h, ',')
			}
			h = append(h, `"t`...)
			h = strconv.AppendInt(h, int64(i), 10)
			h = append(h, `":{"dtype":"F32","shape":[0],"data_offsets":[0,0]}`...)
		}
		return rawHeader(string(append(h, '}')), nil)
	}
	huge := build(1_500_000)
	t.Logf("header of 1.5 M empty tensors: %d bytes", len(huge))
	var err error
	start := time.Now()
	d := allocated(func() { _, _, err = Parse(huge) })
	t.Logf("refused after %v, %d bytes allocated", time.Since(start), d)
	if err == nil || !strings.Contains(err.Error(), "more than 16384 tensors") {
		t.Fatalf("Parse: %v", err)
	}
	// Under 1 KB per tensor read (the JSON decoder's tokens, the Tensor,
	// its shape and map entry): a fraction of the file's 89 MB.
	if d > 32<<20 {
		t.Errorf("refusing the header allocated %d bytes", d)
	}
	ts, _, err := Parse(build(MaxTensors))
	if err != nil || len(ts) != MaxTensors {
		t.Fatalf("a header of MaxTensors tensors: %d tensors, %v", len(ts), err)
	}
	if err := Write(new(bytes.Buffer), make([]Tensor, MaxTensors+1), nil, F32); err == nil || !strings.Contains(err.Error(), "MaxTensors") {
		t.Errorf("Write of MaxTensors+1 tensors: %v", err)
	}
}

func TestWriteRefuses(t *testing.T) {
	for _, tc := range []struct {
		name  string
		meta  map[string]string
		ts    []Tensor
		dtype DType
		want  string
	}{
		{"dtype", nil, nil, "BF16", `dtype "BF16"`},
		{"length", nil, []Tensor{{Name: "a", Shape: []int{3}, Data: []float32{1, 2}}}, F32, "has 2 values, shape [3] needs 3"},
		{"repeated", nil, []Tensor{{Name: "a", Shape: []int{1}, Data: []float32{1}}, {Name: "a", Shape: []int{1}, Data: []float32{1}}}, F16, "used twice"},
		{"reserved", nil, []Tensor{{Name: MetadataKey, Shape: []int{1}, Data: []float32{1}}}, F32, "reserved"},
		{"negative", nil, []Tensor{{Name: "a", Shape: []int{-1}}}, F32, "negative dimension"},
		{"rank", nil, []Tensor{{Name: "a", Shape: make([]int, 9)}}, F32, "more than 8"},
		// A product that overflows (to 0, matching empty Data) would claim a
		// 2^124-value tensor (2^60 where int has 32 bits).
		{"overflow", nil, []Tensor{{Name: "a", Shape: []int{halfInt, halfInt}}}, F32, "overflows"},
		// encoding/json replaces invalid UTF-8 with U+FFFD, so a name would
		// change on the way through a file.
		{"name", nil, []Tensor{{Name: "a\xff", Shape: []int{1}, Data: []float32{1}}}, F32, "UTF-8"},
		{"metadata key", map[string]string{"\xfe": "v"}, nil, F32, "UTF-8"},
		{"metadata value", map[string]string{"k": "v\xfe"}, nil, F32, "UTF-8"},
	} {
		err := Write(&bytes.Buffer{}, tc.ts, tc.meta, tc.dtype)
		if err == nil || !strings.HasPrefix(err.Error(), "safetensors: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: error %v, want one containing %q", tc.name, err, tc.want)
		}
	}
	// A zero dimension after a large one is a valid empty tensor, which
	// the reader accepts too.
	b := encode(t, []Tensor{{Name: "e", Shape: []int{halfInt / 4, 0}}, {Name: "f", Shape: []int{halfInt, halfInt, 0}}}, nil, F32)
	if ts, _, err := Parse(b); err != nil || len(ts) != 2 || ts[0].Shape[0] != halfInt/4 || len(ts[0].Data) != 0 || len(ts[1].Data) != 0 {
		t.Errorf("empty tensors read back: %+v %v", ts, err)
	}
}

func TestFiles(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "ckpt.safetensors")
	ts, meta := sample()
	if err := WriteFile(path, ts, meta, F16); err != nil {
		t.Fatal(err)
	}
	first, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(first, encode(t, ts, meta, F16)) {
		t.Fatal("the file differs from Write's bytes")
	}
	// A failing write leaves the old file and no temporary behind.
	bad := []Tensor{{Name: "a", Shape: []int{3}, Data: []float32{1}}}
	if err := WriteFile(path, bad, nil, F32); err == nil {
		t.Fatal("WriteFile of a bad tensor succeeded")
	}
	if err := WriteFile(filepath.Join(dir, "no", "such", "dir.safetensors"), ts, nil, F32); err == nil || !strings.HasPrefix(err.Error(), "safetensors: writing ") {
		t.Fatalf("writing into a missing folder: %v", err)
	}
	if now, _ := os.ReadFile(path); !bytes.Equal(now, first) {
		t.Fatal("a failed write changed the file")
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 1 {
		t.Fatalf("the folder holds %d entries, want only the file", len(ents))
	}
	got, gotMeta, err := ReadFile(path)
	if err != nil || len(got) != len(ts) || gotMeta["step"] != "1200" || got[0].Name != "conv.bias" || got[0].Data[1] != -1.25 {
		t.Fatalf("ReadFile: %d tensors, %v, %v", len(got), gotMeta, err)
	}
	if _, _, err := ReadFile(filepath.Join(dir, "missing.safetensors")); err == nil || !strings.HasPrefix(err.Error(), "safetensors: ") {
		t.Fatalf("ReadFile of a missing file: %v", err)
	}
	if err := os.WriteFile(path, first[:20], 0o644); err != nil {
		t.Fatal(err)
	}
	if _, _, err := ReadFile(path); err == nil || !strings.HasSuffix(err.Error(), "(file "+path+")") {
		t.Fatalf("ReadFile of a truncated file: %v", err)
	}
}

// halfInt is 2^62 (2^30 where int has 32 bits): the product of two
// overflows int.
const halfInt = math.MaxInt/2 + 1

func TestReadFileRefusesHugeFile(t *testing.T) {
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
	if d := allocated(func() { _, _, err = ReadFile(path) }); d > 1<<20 {
		t.Errorf("refusing the file allocated %d bytes", d)
	}
	if err == nil || !strings.Contains(err.Error(), "more than the limit") {
		t.Fatalf("ReadFile: %v", err)
	}
}

// TestTorchFixture reads files written by testdata/model/gen_st.py from
// PyTorch 1.13 tensors (Debian python3-torch; torch.__version__ reports
// 1.13.0a0) and compares every value bit for bit. The F16 file holds
// torch's own .half() conversion, so converting torch's float32 values with
// Float16Bits must give its bytes.
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
	for _, tc := range []struct {
		file  string
		dtype DType
		key   string
	}{{"tiny_f32.safetensors", F32, "f32"}, {"tiny_f16.safetensors", F16, "f16"}} {
		b, err := os.ReadFile(filepath.Join(dir, tc.file))
		if err != nil {
			t.Fatal(err)
		}
		ts, meta, err := Parse(b)
		if err != nil {
			t.Fatalf("%s: %v", tc.file, err)
		}
		if !strings.HasPrefix(meta["provenance.source"], "testdata/model/gen_st.py") {
			t.Errorf("%s: metadata %v", tc.file, meta)
		}
		want := values[tc.key]
		if len(ts) != len(want) {
			t.Fatalf("%s: %d tensors, the fixture %d", tc.file, len(ts), len(want))
		}
		data := b[8+binary.LittleEndian.Uint64(b):]
		for _, st := range ts {
			w := want[st.Name]
			if st.DType != tc.dtype || len(st.Data) != len(w) {
				t.Fatalf("%s: %s is %s with %d values, want %s with %d", tc.file, st.Name, st.DType, len(st.Data), tc.dtype, len(w))
			}
			for i, bits := range w {
				if math.Float32bits(st.Data[i]) != bits {
					t.Fatalf("%s: %s[%d] = %v, torch %v", tc.file, st.Name, i, st.Data[i], math.Float32frombits(bits))
				}
			}
			if tc.dtype != F16 {
				continue
			}
			raw := data[st.begin:st.end]
			for i, bits := range values["f32"][st.Name] {
				if got, want := Float16Bits(math.Float32frombits(bits)), binary.LittleEndian.Uint16(raw[2*i:]); got != want {
					t.Fatalf("%s[%d]: Float16Bits = %#04x, torch .half() %#04x", st.Name, i, got, want)
				}
			}
		}
	}
}

func FuzzParse(f *testing.F) {
	ts, meta := sample()
	good := encode(f, ts[1:3], meta, F16)
	f.Add(good)
	f.Add(good[:len(good)/2])
	f.Add([]byte{})
	f.Add(rawHeader("{}", nil))
	f.Add(rawHeader(`{"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`, []byte{1, 2, 3, 4}))
	// Found by the fuzzer: header order not sorted by name, field names in
	// another case and a repeated metadata key.
	f.Add(rawHeader(`{"__metadata__":{"0000":"a","0000":"b"},"000000000":{"dAtA_offsets":[0,4],"dtYpe":"F16","shApe":[2]},"000000 0000":{"data_offsets":[4,6],"dtype":"F16","shape":[]}}`, []byte{1, 2, 3, 4, 5, 6}))
	f.Add(rawHeader(`{"b":{"dtype":"F16","shape":[1],"data_offsets":[0,2]},"a":{"dtype":"F16","shape":[1],"data_offsets":[2,4]}}`, []byte{1, 2, 3, 4}))
	f.Fuzz(func(t *testing.T, b []byte) {
		var got []Tensor
		var gotMeta map[string]string
		var err error
		// Parsing allocates the JSON tokens and the float32 values: a small
		// multiple of the input.
		if d := allocated(func() { got, gotMeta, err = Parse(b) }); d > 64*uint64(len(b))+1<<20 {
			t.Fatalf("Parse of %d bytes allocated %d", len(b), d)
		}
		if err != nil {
			if !strings.HasPrefix(err.Error(), "safetensors: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		// Whatever parses must survive a round trip as F32.
		again, againMeta, err := Parse(encode(t, got, gotMeta, F32))
		if err != nil {
			t.Fatal(err)
		}
		if len(again) != len(got) || len(againMeta) != len(gotMeta) {
			t.Fatalf("%d tensors and %d metadata keys became %d and %d", len(got), len(gotMeta), len(again), len(againMeta))
		}
		// Write lists the header by name, so the order may change; match by name.
		byName := map[string]Tensor{}
		for _, a := range again {
			byName[a.Name] = a
		}
		for _, g := range got {
			a, ok := byName[g.Name]
			if !ok || !slices.Equal(a.Shape, g.Shape) || !slices.Equal(math32bits(a.Data), math32bits(g.Data)) {
				t.Fatalf("tensor %q changed in a round trip", g.Name)
			}
		}
	})
}

func math32bits(v []float32) []uint32 {
	b := make([]uint32, len(v))
	for i, x := range v {
		b[i] = math.Float32bits(x)
	}
	return b
}

// TestParseStrictHeader checks that the header is read exactly: JSON allows
// repeated keys and encoding/json matches field names regardless of case,
// so either would let a file say one thing to us and another to other
// readers (the safetensors format lists the fields dtype, shape and
// data_offsets; from the format's documentation, common practice).
func TestParseStrictHeader(t *testing.T) {
	data := []byte{1, 2, 3, 4}
	for _, c := range []struct{ name, header, want string }{
		{"repeated metadata key", `{"__metadata__":{"k":"a","k":"b"},"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`, `key "k" appears twice`},
		{"field in another case", `{"a":{"dType":"F16","shape":[2],"data_offsets":[0,4]}}`, `unknown field "dType"`},
		{"unknown field", `{"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4],"extra":1}}`, `unknown field "extra"`},
		{"repeated field", `{"a":{"dtype":"F16","dtype":"F32","shape":[2],"data_offsets":[0,4]}}`, `key "dtype" appears twice`},
		{"metadata not an object", `{"__metadata__":["a"],"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`, `must be a JSON object`},
		{"metadata value not a string", `{"__metadata__":{"k":1},"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`, `"k" is not a string`},
	} {
		_, _, err := Parse(rawHeader(c.header, data))
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.HasPrefix(err.Error(), "safetensors: ") {
			t.Errorf("%s: got %v, want an error containing %q", c.name, err, c.want)
		}
	}
	// The same header written correctly parses.
	ts, meta, err := Parse(rawHeader(`{"__metadata__":{"k":"a"},"a":{"dtype":"F16","shape":[2],"data_offsets":[0,4]}}`, data))
	if err != nil || len(ts) != 1 || meta["k"] != "a" {
		t.Fatalf("valid header: %v, %d tensors, meta %v", err, len(ts), meta)
	}
}
