package safetensors

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"math/bits"
	"sort"
	"strconv"
)

// DType is the storage type of a tensor in a file.
type DType string

// The storage types this package reads and writes. Values are always
// float32 in memory; F16 (IEEE 754 binary16) halves the file size at a
// precision cost.
const (
	F32 DType = "F32"
	F16 DType = "F16"
)

func (d DType) size() int {
	switch d {
	case F32:
		return 4
	case F16:
		return 2
	}
	return 0
}

// Limits on what a file may claim, so that a hostile header cannot make a
// reader allocate more than a small multiple of the file's size.
const (
	// MaxHeaderSize bounds the JSON header in bytes (100 MiB).
	MaxHeaderSize = 100 << 20
	// MaxTensors bounds the number of tensors a header may list (16,384;
	// a checkpoint of the default network holds 144). Parse stops at the
	// first tensor beyond it, so a header of millions of empty tensors is
	// refused after a bounded amount of work and allocation.
	MaxTensors = 1 << 14
	// MaxDims bounds the rank of a tensor.
	MaxDims = 8
	// MaxFileSize bounds the size of a file that ReadFile reads: 2 GiB − 1,
	// the most bytes one slice holds where int has 32 bits. It is an int64
	// so that comparing it with a file's size compiles and holds on every
	// platform.
	MaxFileSize int64 = 1<<31 - 1
)

// MetadataKey is the header key of the metadata map; no tensor may use it.
const MetadataKey = "__metadata__"

// Tensor is one named tensor of a safetensors file, held as float32.
type Tensor struct {
	// Name is the tensor's key in the header.
	Name string
	// Shape lists the dimensions, outermost first; empty for a scalar.
	Shape []int
	// Data holds the values row-major; its length is the product of Shape.
	Data []float32
	// DType is the storage type the tensor was read with. Write ignores it
	// and stores every tensor with the dtype it is given.
	DType DType

	begin, end uint64 // byte span in the data section, as read
}

type stEntry struct {
	Dtype       string        `json:"dtype"`
	Shape       []json.Number `json:"shape"`
	DataOffsets []json.Number `json:"data_offsets"`
}

// Parse parses the bytes of a safetensors file and returns its tensors in
// header order and its metadata (nil if the file has none). It accepts F32
// and F16 tensors and returns an error naming the tensor or field if the
// file is truncated, the header length runs past the file or beyond
// MaxHeaderSize, the header is not one JSON object, repeats a key (at any
// level), gives a tensor a field other than dtype, shape and data_offsets
// (names match exactly), lists more than MaxTensors tensors, a dtype is unsupported, a rank exceeds
// MaxDims, a shape does not match its byte span, or the tensors do not tile
// the data section exactly (overlaps, gaps, bytes out of range or after
// the last tensor). Its allocation is a small multiple of len(b), whatever
// the header claims. The tensors' Data are new slices; b is not kept.
func Parse(b []byte) ([]Tensor, map[string]string, error) {
	if len(b) < 8 {
		return nil, nil, fmt.Errorf("safetensors: file is truncated: %d bytes, the header length alone needs 8", len(b))
	}
	n := binary.LittleEndian.Uint64(b)
	rest := uint64(len(b) - 8)
	if n > rest {
		return nil, nil, fmt.Errorf("safetensors: header length %d exceeds the file (%d bytes follow the length field)", n, rest)
	}
	if n > MaxHeaderSize {
		return nil, nil, fmt.Errorf("safetensors: header length %d exceeds the limit of %d bytes", n, MaxHeaderSize)
	}
	if n < 2 {
		return nil, nil, fmt.Errorf("safetensors: header length %d is too short for a JSON object", n)
	}
	header := b[8 : 8+n]
	data := b[8+n:]
	if header[0] != '{' {
		return nil, nil, fmt.Errorf("safetensors: header does not start with a JSON object")
	}

	dec := json.NewDecoder(bytes.NewReader(header))
	dec.UseNumber()
	if _, err := dec.Token(); err != nil {
		return nil, nil, fmt.Errorf("safetensors: header: %v", err)
	}
	var meta map[string]string
	var ts []Tensor
	seen := map[string]bool{}
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			return nil, nil, fmt.Errorf("safetensors: header: %v", err)
		}
		name, ok := tok.(string)
		if !ok {
			return nil, nil, fmt.Errorf("safetensors: header: key %v is not a string", tok)
		}
		if seen[name] {
			return nil, nil, fmt.Errorf("safetensors: header: key %q appears twice", name)
		}
		seen[name] = true
		if name == MetadataKey {
			if meta, err = decodeMetadata(dec); err != nil {
				return nil, nil, err
			}
			continue
		}
		if len(ts) == MaxTensors {
			return nil, nil, fmt.Errorf("safetensors: header lists more than %d tensors (MaxTensors)", MaxTensors)
		}
		e, err := decodeEntry(dec, name)
		if err != nil {
			return nil, nil, err
		}
		t, err := checkEntry(name, e, uint64(len(data)))
		if err != nil {
			return nil, nil, err
		}
		ts = append(ts, t)
	}
	if _, err := dec.Token(); err != nil {
		return nil, nil, fmt.Errorf("safetensors: header: %v", err)
	}
	if tail := bytes.TrimRight(header[dec.InputOffset():], " \t\r\n"); len(tail) != 0 {
		return nil, nil, fmt.Errorf("safetensors: header: %d unexpected bytes after the JSON object", len(tail))
	}

	// The tensors must tile the data section: sorted by offset, each starts
	// where the previous ended, and the last ends with the file.
	order := make([]int, len(ts))
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(i, j int) bool {
		a, b := ts[order[i]], ts[order[j]]
		if a.begin != b.begin {
			return a.begin < b.begin
		}
		return a.end < b.end
	})
	var pos uint64
	prev := ""
	for _, i := range order {
		t := ts[i]
		if t.begin < pos {
			return nil, nil, fmt.Errorf("safetensors: tensor %q (bytes %d–%d) overlaps tensor %q", t.Name, t.begin, t.end, prev)
		}
		if t.begin > pos {
			return nil, nil, fmt.Errorf("safetensors: data bytes %d–%d before tensor %q belong to no tensor", pos, t.begin, t.Name)
		}
		pos = t.end
		prev = t.Name
	}
	if pos != uint64(len(data)) {
		return nil, nil, fmt.Errorf("safetensors: data section has %d bytes but the tensors cover %d", len(data), pos)
	}

	for i := range ts {
		t := &ts[i]
		raw := data[t.begin:t.end]
		t.Data = make([]float32, (t.end-t.begin)/uint64(t.DType.size()))
		switch t.DType {
		case F32:
			for k := range t.Data {
				t.Data[k] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*k:]))
			}
		case F16:
			for k := range t.Data {
				t.Data[k] = Float16From(binary.LittleEndian.Uint16(raw[2*k:]))
			}
		}
	}
	return ts, meta, nil
}

// decodeObject reads one JSON object from dec, calling value for each key
// to read its value; a repeated key is an error. encoding/json would keep
// the last of two equal keys and match field names regardless of case, so
// the header is read token by token instead.
func decodeObject(dec *json.Decoder, what string, value func(key string) error) error {
	tok, err := dec.Token()
	if err != nil {
		return fmt.Errorf("safetensors: header: %s: %v", what, err)
	}
	if d, ok := tok.(json.Delim); !ok || d != '{' {
		return fmt.Errorf("safetensors: header: %s must be a JSON object", what)
	}
	seen := map[string]bool{}
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			return fmt.Errorf("safetensors: header: %s: %v", what, err)
		}
		key, _ := tok.(string) // object keys are always strings
		if seen[key] {
			return fmt.Errorf("safetensors: header: %s: key %q appears twice", what, key)
		}
		seen[key] = true
		if err := value(key); err != nil {
			return err
		}
	}
	if _, err := dec.Token(); err != nil {
		return fmt.Errorf("safetensors: header: %s: %v", what, err)
	}
	return nil
}

// decodeMetadata reads the metadata object: string keys to string values.
func decodeMetadata(dec *json.Decoder) (map[string]string, error) {
	meta := map[string]string{}
	err := decodeObject(dec, MetadataKey, func(key string) error {
		tok, err := dec.Token()
		if err != nil {
			return fmt.Errorf("safetensors: header: %s: %v", MetadataKey, err)
		}
		v, ok := tok.(string)
		if !ok {
			return fmt.Errorf("safetensors: header: %s must map strings to strings; %q is not a string", MetadataKey, key)
		}
		meta[key] = v
		return nil
	})
	return meta, err
}

// decodeEntry reads one tensor's entry; its keys are exactly dtype, shape
// and data_offsets, each at most once.
func decodeEntry(dec *json.Decoder, name string) (stEntry, error) {
	var e stEntry
	what := fmt.Sprintf("tensor %q", name)
	err := decodeObject(dec, what, func(key string) error {
		var dst any
		switch key {
		case "dtype":
			dst = &e.Dtype
		case "shape":
			dst = &e.Shape
		case "data_offsets":
			dst = &e.DataOffsets
		default:
			return fmt.Errorf("safetensors: header: %s has an unknown field %q (fields are dtype, shape, data_offsets)", what, key)
		}
		if err := dec.Decode(dst); err != nil {
			return fmt.Errorf("safetensors: header: %s: %s: %v", what, key, err)
		}
		return nil
	})
	return e, err
}

func checkEntry(name string, e stEntry, dataLen uint64) (Tensor, error) {
	t := Tensor{Name: name, DType: DType(e.Dtype)}
	if t.DType.size() == 0 {
		if e.Dtype == "" {
			return t, fmt.Errorf("safetensors: tensor %q has no dtype", name)
		}
		return t, fmt.Errorf("safetensors: tensor %q has dtype %q; this package reads F32 and F16", name, e.Dtype)
	}
	if e.Shape == nil {
		return t, fmt.Errorf("safetensors: tensor %q has no shape", name)
	}
	if len(e.Shape) > MaxDims {
		return t, fmt.Errorf("safetensors: tensor %q has %d dimensions, more than %d", name, len(e.Shape), MaxDims)
	}
	zero := false
	for _, s := range e.Shape {
		d, err := strconv.ParseUint(string(s), 10, 63)
		if err != nil {
			return t, fmt.Errorf("safetensors: tensor %q has an invalid dimension %s", name, s)
		}
		if d > math.MaxInt {
			// Where int has 32 bits: int(d) would wrap around.
			return t, fmt.Errorf("safetensors: tensor %q has dimension %d, more than an int holds on this platform (%d)", name, d, math.MaxInt)
		}
		zero = zero || d == 0
		t.Shape = append(t.Shape, int(d))
	}
	// The product is bounded by the data section step by step, so it
	// cannot overflow; a zero dimension anywhere makes the tensor empty.
	count := uint64(1)
	if zero {
		count = 0
	}
	for _, d := range t.Shape {
		if zero {
			break
		}
		hi, lo := bits.Mul64(count, uint64(d))
		if hi != 0 || lo > dataLen {
			return t, fmt.Errorf("safetensors: tensor %q has shape %v, larger than the data section (%d bytes)", name, e.Shape, dataLen)
		}
		count = lo
	}
	if len(e.DataOffsets) != 2 {
		return t, fmt.Errorf("safetensors: tensor %q: data_offsets must hold 2 numbers, has %d", name, len(e.DataOffsets))
	}
	var off [2]uint64
	for i, s := range e.DataOffsets {
		v, err := strconv.ParseUint(string(s), 10, 64)
		if err != nil {
			return t, fmt.Errorf("safetensors: tensor %q has an invalid data offset %s", name, s)
		}
		off[i] = v
	}
	t.begin, t.end = off[0], off[1]
	if t.begin > t.end || t.end > dataLen {
		return t, fmt.Errorf("safetensors: tensor %q has data offsets [%d, %d] outside the data section of %d bytes", name, t.begin, t.end, dataLen)
	}
	if want := count * uint64(t.DType.size()); t.end-t.begin != want {
		return t, fmt.Errorf("safetensors: tensor %q: shape %v of %s needs %d bytes, its offsets span %d", name, t.Shape, t.DType, want, t.end-t.begin)
	}
	return t, nil
}
