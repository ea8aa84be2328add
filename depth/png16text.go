package depth

import (
	"bytes"
	"encoding/binary"
	"fmt"
	"hash/crc32"
	"io"
	"strconv"
	"strings"
)

// The 16-bit depth PNG describes itself in tEXt chunks (ISO/IEC 15948,
// Latin-1 keyword, a zero byte, the text), written before the image data:
//
//	depth.unit     "mm"            the unit of one grey level's value
//	depth.scale_m  "0.001"         metres per grey level
//	depth.invalid  "0"             the grey level of a pixel without depth
//	depth.rig      rig JSON        the rig at the image's size (optional;
//	                               schema version 2, see Rig.Write)
//
// The keywords are ours. ReadPNG16 honours depth.scale_m and
// depth.invalid, so a file written with another scale reads back in
// metres; a file without the chunks (written before them, or by another
// program) reads as millimetres with 0 invalid.

// PNG16 text keywords.
const (
	pngKeyUnit    = "depth.unit"
	pngKeyScale   = "depth.scale_m"
	pngKeyInvalid = "depth.invalid"
	pngKeyRig     = "depth.rig"
)

// PNG16Info is what a 16-bit depth PNG says about itself (see
// ReadPNG16Info).
type PNG16Info struct {
	// Unit is the unit of a grey level ("mm"); "" if the file does not say.
	Unit string
	// Scale is metres per grey level: the file's depth.scale_m, or 0.001
	// if it has none.
	Scale float64
	// Invalid is the grey level of a pixel without depth (0).
	Invalid uint16
	// Rig is the rig stored with the map, or nil.
	Rig *Rig
	// Described reports whether the file had the depth text chunks at all.
	Described bool
}

// pngTextChunks returns the texts of the file's tEXt chunks by keyword,
// checking each one's CRC. Chunks after the first IDAT are not read.
func pngTextChunks(data []byte) (map[string]string, error) {
	texts := map[string]string{}
	const sig = "\x89PNG\r\n\x1a\n"
	if !bytes.HasPrefix(data, []byte(sig)) {
		return nil, fmt.Errorf("depth: PNG16: not a PNG file")
	}
	p := data[len(sig):]
	for len(p) >= 12 {
		n := binary.BigEndian.Uint32(p)
		typ := string(p[4:8])
		if typ == "IDAT" || typ == "IEND" || uint64(n) > uint64(len(p)-12) {
			break // the image decoder reports a truncated chunk
		}
		body := p[8 : 8+n]
		if typ == "tEXt" {
			if crc32.ChecksumIEEE(p[4:8+n]) != binary.BigEndian.Uint32(p[8+n:]) {
				return nil, fmt.Errorf("depth: PNG16: a text chunk fails its checksum")
			}
			if k, v, ok := bytes.Cut(body, []byte{0}); ok {
				texts[string(k)] = string(v)
			}
		}
		p = p[12+n:]
	}
	return texts, nil
}

// parsePNG16Info reads the depth text chunks of texts.
func parsePNG16Info(texts map[string]string) (*PNG16Info, error) {
	info := &PNG16Info{Scale: 0.001}
	if v, ok := texts[pngKeyUnit]; ok {
		info.Unit, info.Described = v, true
	}
	if v, ok := texts[pngKeyScale]; ok {
		s, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil || !(s > 0) || s > 1e3 {
			return nil, fmt.Errorf("depth: PNG16: %s %q is not a positive scale in metres", pngKeyScale, truncate(v))
		}
		info.Scale, info.Described = s, true
	}
	if v, ok := texts[pngKeyInvalid]; ok {
		if strings.TrimSpace(v) != "0" {
			return nil, fmt.Errorf("depth: PNG16: %s %q: only grey level 0 is supported", pngKeyInvalid, truncate(v))
		}
		info.Described = true
	}
	if v, ok := texts[pngKeyRig]; ok {
		r, err := ReadRig(strings.NewReader(v))
		if err != nil {
			return nil, fmt.Errorf("depth: PNG16: %s: %w", pngKeyRig, err)
		}
		info.Rig, info.Described = r, true
	}
	return info, nil
}

// png16Texts returns the text chunks of a depth PNG at d's size, with rig
// if not nil.
func png16Texts(d *Depth, rig *Rig) ([][2]string, error) {
	t := [][2]string{{pngKeyUnit, "mm"}, {pngKeyScale, "0.001"}, {pngKeyInvalid, "0"}}
	if rig != nil {
		if rig.Width != d.Rect.Dx() || rig.Height != d.Rect.Dy() {
			return nil, fmt.Errorf("depth: PNG16: rig of %dx%d for a %dx%d map (see Rig.Scaled)", rig.Width, rig.Height, d.Rect.Dx(), d.Rect.Dy())
		}
		var b bytes.Buffer
		if err := rig.Write(&b); err != nil {
			return nil, err
		}
		t = append(t, [2]string{pngKeyRig, strings.TrimSpace(b.String())})
	}
	return t, nil
}

// WritePNG16Rig is WritePNG16 with the rig stored in the file's depth.rig
// text chunk; rig must describe images of d's size (see Rig.Scaled).
func WritePNG16Rig(w io.Writer, d *Depth, rig *Rig) (dropped int, err error) {
	return writePNG16(w, d, rig)
}

// SavePNG16Rig is SavePNG16 with the rig stored in the file (see
// WritePNG16Rig).
func SavePNG16Rig(path string, d *Depth, rig *Rig) (dropped int, err error) {
	return savePNG16(path, d, rig)
}

// ReadPNG16Info reads a 16-bit depth PNG like ReadPNG16 and returns what
// its text chunks say too.
func ReadPNG16Info(r io.Reader) (*Depth, *PNG16Info, error) {
	return readPNG16(r)
}

// LoadPNG16Info reads the 16-bit depth PNG at path (see ReadPNG16Info);
// errors name the file.
func LoadPNG16Info(path string) (*Depth, *PNG16Info, error) {
	var info *PNG16Info
	d, err := loadFile(path, func(r io.Reader) (d *Depth, err error) {
		d, info, err = readPNG16(r)
		return d, err
	})
	if err != nil {
		return nil, nil, err
	}
	return d, info, nil
}
