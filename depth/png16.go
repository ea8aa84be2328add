package depth

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"image/png"
	"io"
	"math"

	"github.com/parallaxdepth/parallax/planar"
)

// 16-bit PNG depth: one grey channel holding the depth in millimetres,
// rounded to the nearest millimetre, 0 meaning invalid (common practice for
// range cameras). The representable depths are 1 mm … 65.535 m. The file
// states its unit, scale and invalid level in text chunks, and the rig if
// given (png16text.go).

// Gray16 returns d as a 16-bit grey image in millimetres with d's bounds,
// 0 for invalid pixels, and the number of valid pixels that could not be
// stored because their depth rounds to 0 mm or exceeds 65535 mm; those are
// written as 0 (invalid) too.
func (d *Depth) Gray16() (img *image.Gray16, dropped int) {
	img = image.NewGray16(d.Rect)
	w := d.Rect.Dx()
	for y := 0; y < d.Rect.Dy(); y++ {
		row, mask := d.Pix[y*d.Stride:y*d.Stride+w], d.Mask[y*d.Stride:y*d.Stride+w]
		out := img.Pix[y*img.Stride : y*img.Stride+2*w]
		for x, v := range row {
			if mask[x] == 0 {
				continue
			}
			mm := math.Round(float64(v) * 1000)
			if !(mm >= 1 && mm <= 65535) {
				dropped++
				continue
			}
			out[2*x], out[2*x+1] = uint8(uint16(mm)>>8), uint8(mm)
		}
	}
	return img, dropped
}

// WritePNG16 writes d as a 16-bit grey PNG in millimetres (see Gray16) and
// returns the number of valid pixels outside the representable range
// 1 mm … 65.535 m, which are stored as 0 (invalid).
func WritePNG16(w io.Writer, d *Depth) (dropped int, err error) { return writePNG16(w, d, nil) }

func writePNG16(w io.Writer, d *Depth, rig *Rig) (dropped int, err error) {
	if d == nil {
		return 0, fmt.Errorf("depth: WritePNG16: depth is nil")
	}
	if err := d.Check("depth"); err != nil {
		return 0, err
	}
	texts, err := png16Texts(d, rig)
	if err != nil {
		return 0, err
	}
	img, dropped := d.Gray16()
	if err := encodeGray16(w, img, texts); err != nil {
		return 0, fmt.Errorf("depth: writing PNG: %w", err)
	}
	return dropped, nil
}

// SavePNG16 writes d to path as a 16-bit millimetre PNG (see WritePNG16),
// atomically.
func SavePNG16(path string, d *Depth) (dropped int, err error) { return savePNG16(path, d, nil) }

func savePNG16(path string, d *Depth, rig *Rig) (dropped int, err error) {
	if d == nil {
		return 0, fmt.Errorf("depth: SavePNG16: depth is nil")
	}
	if err := d.Check("depth"); err != nil {
		return 0, err
	}
	err = writeFileAtomic(path, func(w io.Writer) error {
		var err error
		dropped, err = writePNG16(w, d, rig)
		return err
	})
	return dropped, err
}

// maxDeflateRatio is the largest expansion of zlib's deflate (about 1032:1),
// used to bound the image a PNG of a given size can honestly hold.
const maxDeflateRatio = 1032

// ReadPNG16 reads a 16-bit grey PNG of depth in millimetres (or at the
// scale its depth.scale_m text chunk states), 0 invalid, into
// a depth map in metres with bounds (0, 0)–(width, height). It checks the
// header before decoding and returns an error for a PNG that is not 16-bit
// grey, whose size exceeds planar.MaxSide or planar.MaxPixels, or whose header claims more
// pixels than its compressed data could hold; so the memory it allocates is
// bounded by about a thousand times the input size.
func ReadPNG16(r io.Reader) (*Depth, error) {
	d, _, err := readPNG16(r)
	return d, err
}

func readPNG16(r io.Reader) (*Depth, *PNG16Info, error) {
	data, err := io.ReadAll(io.LimitReader(r, 2*planar.MaxPixels+1<<20))
	if err != nil {
		return nil, nil, fmt.Errorf("depth: PNG16: %w", err)
	}
	cfg, err := png.DecodeConfig(bytes.NewReader(data))
	if err != nil {
		return nil, nil, fmt.Errorf("depth: PNG16: %w", err)
	}
	if cfg.ColorModel != color.Gray16Model {
		return nil, nil, fmt.Errorf("depth: PNG16: the image is not 16-bit grey")
	}
	if cfg.Width < 1 || cfg.Height < 1 || cfg.Width > planar.MaxSide || cfg.Height > planar.MaxSide || cfg.Width*cfg.Height > planar.MaxPixels {
		return nil, nil, fmt.Errorf("depth: PNG16: size %dx%d out of range (sides in [1, %d], at most %d pixels)", cfg.Width, cfg.Height, planar.MaxSide, planar.MaxPixels)
	}
	if raw := cfg.Height * (1 + 2*cfg.Width); raw > maxDeflateRatio*len(data) {
		return nil, nil, fmt.Errorf("depth: PNG16: a %dx%d image cannot fit in %d bytes: the file is truncated or corrupt", cfg.Width, cfg.Height, len(data))
	}
	img, err := png.Decode(bytes.NewReader(data))
	if err != nil {
		return nil, nil, fmt.Errorf("depth: PNG16: %w", err)
	}
	g, ok := img.(*image.Gray16)
	if !ok {
		return nil, nil, fmt.Errorf("depth: PNG16: decoded %T, want 16-bit grey", img)
	}
	texts, err := pngTextChunks(data)
	if err != nil {
		return nil, nil, err
	}
	info, err := parsePNG16Info(texts)
	if err != nil {
		return nil, nil, err
	}
	d, err := DepthFromImage(g, info.Scale)
	if err != nil {
		return nil, nil, err
	}
	return d, info, nil
}

// LoadPNG16 reads the 16-bit millimetre PNG at path (see ReadPNG16).
func LoadPNG16(path string) (*Depth, error) {
	return loadFile(path, ReadPNG16)
}
