package safetensors

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"math/bits"
	"os"
	"unicode/utf8"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
)

// Write writes ts and meta (which may be nil) to w as a safetensors file,
// storing every value as dtype (F16 rounds to nearest, ties to even; see
// Float16Bits). The data section holds the tensors in the order of ts; the
// header lists them by name in byte order (so Parse returns them sorted by
// name) and is padded with spaces to a multiple of 8 bytes so that the data
// is aligned.
// It returns an error for an unknown dtype, more than MaxTensors tensors, a
// rank above MaxDims, a repeated name or MetadataKey as a name, a name or
// metadata string that is not valid UTF-8 (JSON would replace its bytes),
// or a Data length that does not match its Shape. Anything it writes,
// Parse reads back.
func Write(w io.Writer, ts []Tensor, meta map[string]string, dtype DType) error {
	size := dtype.size()
	if size == 0 {
		return fmt.Errorf("safetensors: cannot store dtype %q; use F32 or F16", dtype)
	}
	if len(ts) > MaxTensors {
		return fmt.Errorf("safetensors: %d tensors, more than %d (MaxTensors)", len(ts), MaxTensors)
	}
	header := map[string]any{}
	if len(meta) > 0 {
		for k, v := range meta {
			if !utf8.ValidString(k) || !utf8.ValidString(v) {
				return fmt.Errorf("safetensors: metadata %q: %q is not valid UTF-8", k, v)
			}
		}
		header[MetadataKey] = meta
	}
	var off uint64
	for _, t := range ts {
		if _, dup := header[t.Name]; dup || t.Name == MetadataKey {
			return fmt.Errorf("safetensors: tensor name %q used twice or reserved", t.Name)
		}
		if !utf8.ValidString(t.Name) {
			return fmt.Errorf("safetensors: tensor name %q is not valid UTF-8", t.Name)
		}
		if len(t.Shape) > MaxDims {
			return fmt.Errorf("safetensors: tensor %q has %d dimensions, more than %d", t.Name, len(t.Shape), MaxDims)
		}
		count, err := shapeLen(t)
		if err != nil {
			return err
		}
		if count != len(t.Data) {
			return fmt.Errorf("safetensors: tensor %q has %d values, shape %v needs %d", t.Name, len(t.Data), t.Shape, count)
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
		return fmt.Errorf("safetensors: encoding header: %v", err)
	}
	for len(hb)%8 != 0 {
		hb = append(hb, ' ')
	}
	fail := func(err error) error { return fmt.Errorf("safetensors: writing: %w", err) }
	var lb [8]byte
	binary.LittleEndian.PutUint64(lb[:], uint64(len(hb)))
	if _, err := w.Write(lb[:]); err != nil {
		return fail(err)
	}
	if _, err := w.Write(hb); err != nil {
		return fail(err)
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
					return fail(err)
				}
				buf = buf[:0]
			}
		}
	}
	if _, err := w.Write(buf); err != nil {
		return fail(err)
	}
	return nil
}

// shapeLen returns the number of values t.Shape holds: 0 if any dimension
// is 0 (as Parse counts it), whatever the others.
func shapeLen(t Tensor) (int, error) {
	count := 1
	for _, d := range t.Shape {
		if d < 0 {
			return 0, fmt.Errorf("safetensors: tensor %q has a negative dimension in %v", t.Name, t.Shape)
		}
		if d == 0 {
			count = 0
		}
	}
	for _, d := range t.Shape {
		if count == 0 {
			break
		}
		hi, lo := bits.Mul64(uint64(count), uint64(d))
		if hi != 0 || lo > math.MaxInt {
			return 0, fmt.Errorf("safetensors: tensor %q: shape %v overflows", t.Name, t.Shape)
		}
		count = int(lo)
	}
	return count, nil
}

// WriteFile writes ts and meta to the file path as Write does, atomically:
// a temporary file in the same directory, synced, then renamed over path
// (package internal/atomicfile). The file is encoded in memory first, so
// bad tensors leave no temporary file behind; on any error the old file,
// if any, is left unchanged. File-system errors read
// "safetensors: writing PATH: …".
func WriteFile(path string, ts []Tensor, meta map[string]string, dtype DType) error {
	var buf bytes.Buffer
	if err := Write(&buf, ts, meta, dtype); err != nil {
		return err
	}
	return atomicfile.WriteBytes(path, "safetensors", buf.Bytes())
}

// ReadFile reads and parses the safetensors file at path (see Parse). It
// refuses a file larger than MaxFileSize before reading it. Parse errors
// end with "(file PATH)".
func ReadFile(path string) ([]Tensor, map[string]string, error) {
	b, err := readLimited(path)
	if err != nil {
		return nil, nil, err
	}
	ts, meta, err := Parse(b)
	if err != nil {
		return nil, nil, fmt.Errorf("%w (file %s)", err, path)
	}
	return ts, meta, nil
}

// readLimited reads the file at path, refusing one larger than MaxFileSize
// before reading it.
func readLimited(path string) ([]byte, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("safetensors: %w", err)
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return nil, fmt.Errorf("safetensors: %w", err)
	}
	if st.Size() > MaxFileSize {
		return nil, fmt.Errorf("safetensors: %s has %d bytes, more than the limit of %d", path, st.Size(), MaxFileSize)
	}
	// Read at most one byte more than the size seen, in case the file grows.
	b, err := io.ReadAll(io.LimitReader(f, st.Size()+1))
	if err != nil {
		return nil, fmt.Errorf("safetensors: reading %s: %w", path, err)
	}
	if int64(len(b)) > MaxFileSize {
		return nil, fmt.Errorf("safetensors: %s grew beyond %d bytes while being read", path, MaxFileSize)
	}
	return b, nil
}
