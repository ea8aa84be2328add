package depth

import (
	"bufio"
	"compress/zlib"
	"encoding/binary"
	"hash/crc32"
	"image"
	"io"
)

// encodeGray16 writes img as a 16-bit greyscale PNG (ISO/IEC 15948), with
// a tEXt chunk for each keyword and text of texts before the data. It
// exists because image/png converts every pixel of a Gray16 through
// image.Image.At, one allocation per pixel; this encoder works on the rows
// directly. Each row takes the filter among the five of the standard that
// minimises the sum of absolute byte differences, the heuristic the PNG
// specification suggests and image/png also uses.
func encodeGray16(w io.Writer, img *image.Gray16, texts [][2]string) error {
	width, height := img.Rect.Dx(), img.Rect.Dy()
	bw := bufio.NewWriterSize(w, 1<<16)
	bw.WriteString("\x89PNG\r\n\x1a\n")
	var ihdr [13]byte
	binary.BigEndian.PutUint32(ihdr[0:], uint32(width))
	binary.BigEndian.PutUint32(ihdr[4:], uint32(height))
	ihdr[8], ihdr[9] = 16, 0 // bit depth 16, colour type 0 (greyscale)
	writeChunk(bw, "IHDR", ihdr[:])
	for _, t := range texts {
		writeChunk(bw, "tEXt", append(append([]byte(t[0]), 0), t[1]...))
	}

	cw := &chunkWriter{w: bw}
	zw, err := zlib.NewWriterLevel(cw, zlib.DefaultCompression)
	if err != nil {
		return err
	}
	n := 2 * width
	prev := make([]byte, n)
	var cand [5][]byte
	for i := range cand {
		cand[i] = make([]byte, 1+n)
		cand[i][0] = byte(i)
	}
	for y := 0; y < height; y++ {
		i := img.PixOffset(img.Rect.Min.X, img.Rect.Min.Y+y)
		cur := img.Pix[i : i+n]
		best := filterRow(&cand, cur, prev)
		if _, err := zw.Write(cand[best]); err != nil {
			return err
		}
		copy(prev, cur)
	}
	if err := zw.Close(); err != nil {
		return err
	}
	if err := cw.flush(); err != nil {
		return err
	}
	writeChunk(bw, "IEND", nil)
	return bw.Flush()
}

// filterRow fills cand[f][1:] with cur under PNG filter f (0 None, 1 Sub,
// 2 Up, 3 Average, 4 Paeth; 2 bytes per pixel) and returns the filter with
// the smallest sum of absolute values taken as signed bytes.
func filterRow(cand *[5][]byte, cur, prev []byte) int {
	const bpp = 2
	copy(cand[0][1:], cur)
	for i := range cur {
		var a, c byte
		if i >= bpp {
			a, c = cur[i-bpp], prev[i-bpp]
		}
		b := prev[i]
		cand[1][1+i] = cur[i] - a
		cand[2][1+i] = cur[i] - b
		cand[3][1+i] = cur[i] - byte((int(a)+int(b))/2)
		cand[4][1+i] = cur[i] - paeth(a, b, c)
	}
	best, bestSum := 0, -1
	for f := range cand {
		sum := 0
		for _, v := range cand[f][1:] {
			if v < 128 {
				sum += int(v)
			} else {
				sum += 256 - int(v)
			}
		}
		if bestSum < 0 || sum < bestSum {
			best, bestSum = f, sum
		}
	}
	return best
}

// paeth is the Paeth predictor of the PNG specification.
func paeth(a, b, c byte) byte {
	p := int(a) + int(b) - int(c)
	pa, pb, pc := abs(p-int(a)), abs(p-int(b)), abs(p-int(c))
	if pa <= pb && pa <= pc {
		return a
	}
	if pb <= pc {
		return b
	}
	return c
}

func abs(x int) int {
	if x < 0 {
		return -x
	}
	return x
}

// writeChunk writes one PNG chunk: length, type, data, CRC of type and data.
// Errors stay in the bufio.Writer and surface at Flush.
func writeChunk(w *bufio.Writer, typ string, data []byte) {
	var b [4]byte
	binary.BigEndian.PutUint32(b[:], uint32(len(data)))
	w.Write(b[:])
	w.WriteString(typ)
	w.Write(data)
	crc := crc32.NewIEEE()
	crc.Write([]byte(typ))
	crc.Write(data)
	binary.BigEndian.PutUint32(b[:], crc.Sum32())
	w.Write(b[:])
}

// chunkWriter collects compressed data and emits it as IDAT chunks of up to
// 64 KiB.
type chunkWriter struct {
	w   *bufio.Writer
	buf []byte
}

const idatSize = 1 << 16

func (c *chunkWriter) Write(p []byte) (int, error) {
	n := len(p)
	for len(p) > 0 {
		k := min(idatSize-len(c.buf), len(p))
		c.buf = append(c.buf, p[:k]...)
		p = p[k:]
		if len(c.buf) == idatSize {
			if err := c.flush(); err != nil {
				return 0, err
			}
		}
	}
	return n, nil
}

func (c *chunkWriter) flush() error {
	if len(c.buf) > 0 {
		writeChunk(c.w, "IDAT", c.buf)
		c.buf = c.buf[:0]
	}
	return nil
}
