package model

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/bits"
	"sort"
	"strconv"
	"unicode/utf8"
)

// This file reads and writes the safetensors container: an 8-byte
// little-endian header length N, N bytes of JSON mapping each tensor name to
// {"dtype", "shape", "data_offsets": [begin, end]} (byte offsets into the
// data that follows the header) plus an optional "__metadata__" map of
// strings, then the tensor bytes, little-endian, row-major.

// DType is the storage type of a tensor in a weights file.
type DType string

// The storage types this package reads and writes. Values are always
// float32 in memory; F16 halves the file size at a precision cost.
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

// maxHeader bounds the JSON header, so a hostile length cannot ask for an
// absurd allocation even inside a large file.
const maxHeader = 100 << 20

// maxDims bounds the rank of a tensor.
const maxDims = 8

const metadataKey = "__metadata__"

// Tensor is one named tensor of a safetensors file, held as float32.
type Tensor struct {
	// Name is the tensor's key in the header.
	Name string
	// Shape lists the dimensions, outermost first; empty for a scalar.
	Shape []int
	// Data holds the values row-major; its length is the product of Shape.
	Data []float32
	// DType is the storage type the tensor was read with. WriteSafetensors
	// ignores it and stores every tensor with the dtype it is given.
	DType DType

	begin, end uint64
	raw        []byte // the stored bytes, aliasing the file buffer
}

type stEntry struct {
	Dtype       string        `json:"dtype"`
	Shape       []json.Number `json:"shape"`
	DataOffsets []json.Number `json:"data_offsets"`
}

// ReadSafetensors parses the bytes of a safetensors file and returns its
// metadata (nil if the file has none) and its tensors in header order. It
// accepts F32 and F16 tensors and returns an error naming the tensor or
// field if the file is truncated, the header length runs past the file or
// beyond 100 MiB, the header is not one JSON object or repeats a key, a
// dtype is unsupported, a shape does not match its byte span, or the
// tensors do not tile the data section exactly (overlaps, gaps, bytes out
// of range or after the last tensor). Its allocation is a small multiple of
// len(b), whatever the header claims.
func ReadSafetensors(b []byte) (map[string]string, []Tensor, error) {
	if len(b) < 8 {
		return nil, nil, fmt.Errorf("model: weights file is truncated: %d bytes, the header length alone needs 8", len(b))
	}
	n := binary.LittleEndian.Uint64(b)
	rest := uint64(len(b) - 8)
	if n > rest {
		return nil, nil, fmt.Errorf("model: header length %d exceeds the file (%d bytes follow the length field)", n, rest)
	}
	if n > maxHeader {
		return nil, nil, fmt.Errorf("model: header length %d exceeds the limit of %d bytes", n, maxHeader)
	}
	if n < 2 {
		return nil, nil, fmt.Errorf("model: header length %d is too short for a JSON object", n)
	}
	header := b[8 : 8+n]
	data := b[8+n:]
	if header[0] != '{' {
		return nil, nil, fmt.Errorf("model: header does not start with a JSON object")
	}

	dec := json.NewDecoder(bytes.NewReader(header))
	dec.UseNumber()
	if _, err := dec.Token(); err != nil {
		return nil, nil, fmt.Errorf("model: header: %v", err)
	}
	var meta map[string]string
	var ts []Tensor
	seen := map[string]bool{}
	for dec.More() {
		tok, err := dec.Token()
		if err != nil {
			return nil, nil, fmt.Errorf("model: header: %v", err)
		}
		name, ok := tok.(string)
		if !ok {
			return nil, nil, fmt.Errorf("model: header: key %v is not a string", tok)
		}
		if seen[name] {
			return nil, nil, fmt.Errorf("model: header: key %q appears twice", name)
		}
		seen[name] = true
		if name == metadataKey {
			if err := dec.Decode(&meta); err != nil {
				return nil, nil, fmt.Errorf("model: header: %s must map strings to strings: %v", metadataKey, err)
			}
			continue
		}
		var e stEntry
		if err := dec.Decode(&e); err != nil {
			return nil, nil, fmt.Errorf("model: header: tensor %q: %v", name, err)
		}
		t, err := checkEntry(name, e, uint64(len(data)))
		if err != nil {
			return nil, nil, err
		}
		ts = append(ts, t)
	}
	if _, err := dec.Token(); err != nil {
		return nil, nil, fmt.Errorf("model: header: %v", err)
	}
	if tail := bytes.TrimRight(header[dec.InputOffset():], " \t\r\n"); len(tail) != 0 {
		return nil, nil, fmt.Errorf("model: header: %d unexpected bytes after the JSON object", len(tail))
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
			return nil, nil, fmt.Errorf("model: tensor %q (bytes %d–%d) overlaps tensor %q", t.Name, t.begin, t.end, prev)
		}
		if t.begin > pos {
			return nil, nil, fmt.Errorf("model: data bytes %d–%d before tensor %q belong to no tensor", pos, t.begin, t.Name)
		}
		pos = t.end
		prev = t.Name
	}
	if pos != uint64(len(data)) {
		return nil, nil, fmt.Errorf("model: data section has %d bytes but the tensors cover %d", len(data), pos)
	}

	for i := range ts {
		t := &ts[i]
		t.raw = data[t.begin:t.end:t.end]
		t.Data = make([]float32, (t.end-t.begin)/uint64(t.DType.size()))
		switch t.DType {
		case F32:
			for k := range t.Data {
				t.Data[k] = math.Float32frombits(binary.LittleEndian.Uint32(t.raw[4*k:]))
			}
		case F16:
			for k := range t.Data {
				t.Data[k] = Float16From(binary.LittleEndian.Uint16(t.raw[2*k:]))
			}
		}
	}
	return meta, ts, nil
}

func checkEntry(name string, e stEntry, dataLen uint64) (Tensor, error) {
	t := Tensor{Name: name, DType: DType(e.Dtype)}
	if t.DType.size() == 0 {
		if e.Dtype == "" {
			return t, fmt.Errorf("model: tensor %q has no dtype", name)
		}
		return t, fmt.Errorf("model: tensor %q has dtype %q; this package reads F32 and F16", name, e.Dtype)
	}
	if e.Shape == nil {
		return t, fmt.Errorf("model: tensor %q has no shape", name)
	}
	if len(e.Shape) > maxDims {
		return t, fmt.Errorf("model: tensor %q has %d dimensions, more than %d", name, len(e.Shape), maxDims)
	}
	zero := false
	for _, s := range e.Shape {
		d, err := strconv.ParseUint(string(s), 10, 63)
		if err != nil {
			return t, fmt.Errorf("model: tensor %q has an invalid dimension %s", name, s)
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
			return t, fmt.Errorf("model: tensor %q has shape %v, larger than the data section (%d bytes)", name, e.Shape, dataLen)
		}
		count = lo
	}
	if len(e.DataOffsets) != 2 {
		return t, fmt.Errorf("model: tensor %q: data_offsets must hold 2 numbers, has %d", name, len(e.DataOffsets))
	}
	var off [2]uint64
	for i, s := range e.DataOffsets {
		v, err := strconv.ParseUint(string(s), 10, 64)
		if err != nil {
			return t, fmt.Errorf("model: tensor %q has an invalid data offset %s", name, s)
		}
		off[i] = v
	}
	t.begin, t.end = off[0], off[1]
	if t.begin > t.end || t.end > dataLen {
		return t, fmt.Errorf("model: tensor %q has data offsets [%d, %d] outside the data section of %d bytes", name, t.begin, t.end, dataLen)
	}
	if want := count * uint64(t.DType.size()); t.end-t.begin != want {
		return t, fmt.Errorf("model: tensor %q: shape %v of %s needs %d bytes, its offsets span %d", name, t.Shape, t.DType, want, t.end-t.begin)
	}
	return t, nil
}

// WriteSafetensors writes meta (which may be nil) and ts, in that order,
// to w as a safetensors file, storing every value as dtype (F16 rounds to
// nearest, ties to even). The header is padded with spaces to a multiple of
// 8 bytes so that the data is aligned. It returns an error for an unknown
// dtype, a repeated or reserved name, a name or metadata string that is not
// valid UTF-8 (JSON would replace its bytes), or a Data length that does not
// match its Shape.
func WriteSafetensors(w io.Writer, meta map[string]string, ts []Tensor, dtype DType) error {
	size := dtype.size()
	if size == 0 {
		return fmt.Errorf("model: cannot store dtype %q; use F32 or F16", dtype)
	}
	header := map[string]any{}
	if len(meta) > 0 {
		for k, v := range meta {
			if !utf8.ValidString(k) || !utf8.ValidString(v) {
				return fmt.Errorf("model: metadata %q: %q is not valid UTF-8", k, v)
			}
		}
		header[metadataKey] = meta
	}
	var off uint64
	for _, t := range ts {
		if _, dup := header[t.Name]; dup || t.Name == metadataKey {
			return fmt.Errorf("model: tensor name %q used twice or reserved", t.Name)
		}
		if !utf8.ValidString(t.Name) {
			return fmt.Errorf("model: tensor name %q is not valid UTF-8", t.Name)
		}
		count := 1
		for _, d := range t.Shape {
			if d < 0 {
				return fmt.Errorf("model: tensor %q has a negative dimension in %v", t.Name, t.Shape)
			}
			if d == 0 {
				count = 0 // empty, whatever the other dimensions (as the reader)
			}
		}
		for _, d := range t.Shape {
			if count == 0 {
				break
			}
			hi, lo := bits.Mul64(uint64(count), uint64(d))
			if hi != 0 || lo > math.MaxInt {
				return fmt.Errorf("model: tensor %q: shape %v overflows", t.Name, t.Shape)
			}
			count = int(lo)
		}
		if count != len(t.Data) {
			return fmt.Errorf("model: tensor %q has %d values, shape %v needs %d", t.Name, len(t.Data), t.Shape, count)
		}
		n := uint64(len(t.Data) * size)
		shape := t.Shape
		if shape == nil {
			shape = []int{}
		}
		header[t.Name] = map[string]any{"dtype": string(dtype), "shape": shape, "data_offsets": [2]uint64{off, off + n}}
		off += n
	}
	hb, err := json.Marshal(header)
	if err != nil {
		return fmt.Errorf("model: encoding header: %v", err)
	}
	for len(hb)%8 != 0 {
		hb = append(hb, ' ')
	}
	var lb [8]byte
	binary.LittleEndian.PutUint64(lb[:], uint64(len(hb)))
	if _, err := w.Write(lb[:]); err != nil {
		return fmt.Errorf("model: writing weights: %w", err)
	}
	if _, err := w.Write(hb); err != nil {
		return fmt.Errorf("model: writing weights: %w", err)
	}
	buf := make([]byte, 0, 1<<16)
	for _, t := range ts {
		for _, v := range t.Data {
			if dtype == F32 {
				buf = binary.LittleEndian.AppendUint32(buf, math.Float32bits(v))
			} else {
				buf = binary.LittleEndian.AppendUint16(buf, Float16Bits(v))
			}
			if len(buf) >= 1<<16-4 {
				if _, err := w.Write(buf); err != nil {
					return fmt.Errorf("model: writing weights: %w", err)
				}
				buf = buf[:0]
			}
		}
	}
	if _, err := w.Write(buf); err != nil {
		return fmt.Errorf("model: writing weights: %w", err)
	}
	return nil
}

// SaveSafetensors writes meta and ts to the file path as WriteSafetensors
// does, atomically: a temporary file in the same directory, synced, then
// renamed over path. On error the old file, if any, is left unchanged.
func SaveSafetensors(path string, meta map[string]string, ts []Tensor, dtype DType) error {
	// Encode first so that bad tensors leave no temporary file behind.
	var buf bytes.Buffer
	if err := WriteSafetensors(&buf, meta, ts, dtype); err != nil {
		return err
	}
	return writeFileAtomic(path, buf.Bytes())
}

// LoadSafetensors reads the safetensors file at path (see
// ReadSafetensors). It refuses files larger than MaxFileSize before
// reading them.
func LoadSafetensors(path string) (map[string]string, []Tensor, error) {
	b, err := readFileLimited(path)
	if err != nil {
		return nil, nil, err
	}
	meta, ts, err := ReadSafetensors(b)
	if err != nil {
		return nil, nil, fmt.Errorf("%w (file %s)", err, path)
	}
	return meta, ts, nil
}
