package depth

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"strconv"

	"github.com/parallaxdepth/parallax/planar"
)

// PFM (Portable FloatMap) stores float32 samples after a three-line text
// header: "Pf" (one channel) or "PF" (three channels), "width height", and a
// scale whose sign gives the byte order (negative: little-endian, positive:
// big-endian). Rows run from the bottom of the image to the top.

// pfmChunk is how many bytes ReadPFM reads at a time; the sample slice grows
// as data arrives, so a header that promises more than the input holds costs
// no more memory than the input itself.
const pfmChunk = 1 << 16

// WritePFM writes pix, row-major with the top row first and channels
// interleaved, as a little-endian PFM ("Pf" for channels = 1, "PF" for
// channels = 3) with scale −1. Non-finite samples are written as they are
// (PFM disparity files commonly mark unknown pixels with +Inf). WritePFM
// returns an error if the size is out of range or len(pix) is not
// width·height·channels.
func WritePFM(w io.Writer, pix []float32, width, height, channels int) error {
	if channels != 1 && channels != 3 {
		return fmt.Errorf("depth: PFM supports 1 or 3 channels, not %d", channels)
	}
	if width < 1 || height < 1 || width > planar.MaxSide || height > planar.MaxSide || width*height > planar.MaxPixels {
		return fmt.Errorf("depth: PFM size %dx%d out of range (sides in [1, %d], at most %d pixels)", width, height, planar.MaxSide, planar.MaxPixels)
	}
	if len(pix) != width*height*channels {
		return fmt.Errorf("depth: PFM %dx%dx%d needs %d samples, got %d", width, height, channels, width*height*channels, len(pix))
	}
	magic := "Pf"
	if channels == 3 {
		magic = "PF"
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	fmt.Fprintf(bw, "%s\n%d %d\n-1.0\n", magic, width, height)
	row := width * channels
	buf := make([]byte, 4*row)
	for y := height - 1; y >= 0; y-- {
		for i, v := range pix[y*row : (y+1)*row] {
			binary.LittleEndian.PutUint32(buf[4*i:], math.Float32bits(v))
		}
		if _, err := bw.Write(buf); err != nil {
			return fmt.Errorf("depth: writing PFM: %w", err)
		}
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("depth: writing PFM: %w", err)
	}
	return nil
}

// SavePFM writes pix to path as PFM (see WritePFM), atomically.
func SavePFM(path string, pix []float32, width, height, channels int) error {
	return writeFileAtomic(path, func(w io.Writer) error {
		return WritePFM(w, pix, width, height, channels)
	})
}

// ReadPFM reads a PFM image of either byte order and returns its samples
// row-major with the top row first and channels interleaved. Samples are
// returned as stored, including NaN and ±Inf; the header scale only sets the
// byte order. ReadPFM returns an error for a malformed header, a zero or
// non-finite scale, a size beyond planar.MaxSide or planar.MaxPixels, or truncated data;
// its allocation is bounded by the size of the input, whatever the header
// claims.
func ReadPFM(r io.Reader) (pix []float32, width, height, channels int, err error) {
	br := bufio.NewReaderSize(r, pfmChunk)
	fail := func(format string, a ...any) ([]float32, int, int, int, error) {
		return nil, 0, 0, 0, fmt.Errorf("depth: PFM: "+format, a...)
	}
	magic, err := pfmToken(br)
	if err != nil {
		return fail("reading the header: %v", err)
	}
	switch magic {
	case "Pf":
		channels = 1
	case "PF":
		channels = 3
	default:
		return fail("bad magic %q, want \"Pf\" or \"PF\"", truncate(magic))
	}
	var dims [2]int
	for i, name := range []string{"width", "height"} {
		tok, err := pfmToken(br)
		if err != nil {
			return fail("reading the %s: %v", name, err)
		}
		v, err := strconv.Atoi(tok)
		if err != nil || v < 1 || v > planar.MaxSide {
			return fail("%s %q is not an integer in [1, %d]", name, truncate(tok), planar.MaxSide)
		}
		dims[i] = v
	}
	width, height = dims[0], dims[1]
	if width*height > planar.MaxPixels {
		return fail("size %dx%d exceeds %d pixels", width, height, planar.MaxPixels)
	}
	tok, err := pfmToken(br)
	if err != nil {
		return fail("reading the scale: %v", err)
	}
	scale, err := strconv.ParseFloat(tok, 64)
	if err != nil || scale == 0 || math.IsNaN(scale) || math.IsInf(scale, 0) {
		return fail("scale %q is not a non-zero finite number", truncate(tok))
	}
	// pfmToken consumed exactly one whitespace byte after the scale; the
	// samples start here.
	var order binary.ByteOrder = binary.BigEndian
	if scale < 0 {
		order = binary.LittleEndian
	}
	n := width * height * channels
	pix = make([]float32, 0, min(n, pfmChunk/4))
	buf := make([]byte, pfmChunk)
	for len(pix) < n {
		want := min(4*(n-len(pix)), len(buf))
		if _, err := io.ReadFull(br, buf[:want]); err != nil {
			if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
				return fail("data truncated: the header promises %d samples", n)
			}
			return fail("reading data: %v", err)
		}
		for i := 0; i < want; i += 4 {
			pix = append(pix, math.Float32frombits(order.Uint32(buf[i:])))
		}
	}
	// Flip from PFM's bottom-to-top rows to top-to-bottom.
	row := width * channels
	tmp := make([]float32, row)
	for y := 0; y < height/2; y++ {
		a, b := pix[y*row:(y+1)*row], pix[(height-1-y)*row:(height-y)*row]
		copy(tmp, a)
		copy(a, b)
		copy(b, tmp)
	}
	return pix, width, height, channels, nil
}

// LoadPFM reads the PFM file at path (see ReadPFM).
func LoadPFM(path string) (pix []float32, width, height, channels int, err error) {
	pix, err = loadFile(path, func(r io.Reader) (pix []float32, err error) {
		pix, width, height, channels, err = ReadPFM(r)
		return pix, err
	})
	if err != nil {
		return nil, 0, 0, 0, err
	}
	return pix, width, height, channels, nil
}

// maxPFMToken bounds a header token, so a file of digits cannot make the
// reader buffer without limit.
const maxPFMToken = 64

// pfmToken skips leading whitespace, reads a token of non-whitespace bytes
// and consumes the single whitespace byte that ends it.
func pfmToken(br *bufio.Reader) (string, error) {
	return headerText(br, maxPFMToken, "header token", isSpace, true)
}

// headerText reads a piece of a text header (PFM or PLY): the bytes up to
// the first for which ends is true, which is consumed and not returned. With
// skipEmpty, such bytes before the first other byte are skipped. More than
// limit bytes are an error naming what, and so is the end of the file.
func headerText(br *bufio.Reader, limit int, what string, ends func(byte) bool, skipEmpty bool) (string, error) {
	var b []byte
	for {
		c, err := br.ReadByte()
		if errors.Is(err, io.EOF) {
			return "", errors.New("unexpected end of file")
		}
		if err != nil {
			return "", err
		}
		if ends(c) {
			if len(b) > 0 || !skipEmpty {
				return string(b), nil
			}
			continue
		}
		if len(b) == limit {
			return "", fmt.Errorf("%s longer than %d bytes", what, limit)
		}
		b = append(b, c)
	}
}

func isSpace(c byte) bool {
	return c == ' ' || c == '\t' || c == '\n' || c == '\r' || c == '\v' || c == '\f'
}

// truncate shortens s for an error message.
func truncate(s string) string {
	if len(s) > 16 {
		return s[:16] + "…"
	}
	return s
}
