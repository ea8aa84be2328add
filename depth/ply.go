package depth

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"image"
	"image/color"
	"io"
	"math"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/planar"
)

// Point is one point of a cloud: camera coordinates in metres (x right,
// y down, z forward from the left camera) and an 8-bit sRGB colour.
type Point struct {
	X, Y, Z float32
	R, G, B uint8
}

// PointCloud is a list of points, with or without colour.
type PointCloud struct {
	Points []Point
	// Color reports whether the points carry colour; without it R, G and B
	// are 0 and WritePLY writes no colour properties.
	Color bool
	// Width and Height, if not 0, make the cloud organised: Points holds
	// Width·Height points in row-major pixel order, and a pixel without
	// depth is a point whose X, Y and Z are NaN (see OrganizedPointCloud).
	// WritePLY states the grid in the header as "obj_info num_cols W" and
	// "obj_info num_rows H" (the convention of the Point Cloud Library's PLY
	// files, from memory); ReadPLY reads it back.
	Width, Height int
}

// PointCloudFromDepth back-projects every valid pixel of z through the left
// camera of rig: X = (x−Cx)·Z/Fx, Y = (y−Cy)·Z/Fy. The map's coordinates are
// those of the rig's image (its bounds must lie inside the rig's size; see
// Rig.Scaled). If img is not nil it must have the size of z, and its pixel at
// the same offset from its bounds' origin colours the point; fast paths cover
// *image.RGBA and *image.NRGBA. Invalid pixels are skipped, and points come
// in row-major pixel order.
func PointCloudFromDepth(z *Depth, img image.Image, rig *Rig) (*PointCloud, error) {
	if z == nil {
		return nil, errors.New("depth: PointCloudFromDepth: depth is nil")
	}
	if err := rig.checkFrame(&z.Map, "depth"); err != nil {
		return nil, err
	}
	var ib image.Rectangle
	if img != nil {
		ib = img.Bounds()
		if ib.Dx() != z.Rect.Dx() || ib.Dy() != z.Rect.Dy() {
			return nil, fmt.Errorf("depth: PointCloudFromDepth: image size %dx%d differs from depth size %dx%d", ib.Dx(), ib.Dy(), z.Rect.Dx(), z.Rect.Dy())
		}
	}
	pc := &PointCloud{Points: make([]Point, 0, z.Valid()), Color: img != nil}
	for y := z.Rect.Min.Y; y < z.Rect.Max.Y; y++ {
		for x := z.Rect.Min.X; x < z.Rect.Max.X; x++ {
			v, ok := z.At(x, y)
			if !ok {
				continue
			}
			zz := float64(v)
			p := Point{
				X: float32((float64(x) - rig.Cx) * zz / rig.Fx),
				Y: float32((float64(y) - rig.Cy) * zz / rig.Fy),
				Z: v,
			}
			if img != nil {
				p.R, p.G, p.B = rgb8(img, ib.Min.X+x-z.Rect.Min.X, ib.Min.Y+y-z.Rect.Min.Y)
			}
			pc.Points = append(pc.Points, p)
		}
	}
	return pc, nil
}

// rgb8 returns the non-premultiplied 8-bit colour of img at (x, y).
func rgb8(img image.Image, x, y int) (r, g, b uint8) {
	switch im := img.(type) {
	case *image.NRGBA:
		i := im.PixOffset(x, y)
		return im.Pix[i], im.Pix[i+1], im.Pix[i+2]
	case *image.RGBA:
		i := im.PixOffset(x, y)
		if a := im.Pix[i+3]; a != 255 {
			c := color.NRGBAModel.Convert(color.RGBA{im.Pix[i], im.Pix[i+1], im.Pix[i+2], a}).(color.NRGBA)
			return c.R, c.G, c.B
		}
		return im.Pix[i], im.Pix[i+1], im.Pix[i+2]
	}
	c := color.NRGBAModel.Convert(img.At(x, y)).(color.NRGBA)
	return c.R, c.G, c.B
}

// PLYFormat selects the PLY encoding. The zero value is binary
// little-endian.
type PLYFormat int

// The PLY encodings WritePLY and SavePLY can write; ReadPLY reads both.
const (
	// PLYBinary writes "format binary_little_endian 1.0".
	PLYBinary PLYFormat = iota
	// PLYASCII writes "format ascii 1.0".
	PLYASCII
)

// WritePLY writes pc as a PLY file with one element "vertex" of float
// properties x, y, z and, if pc.Color, uchar properties red, green, blue.
// It returns an error if pc is nil, format is unknown, a coordinate is not
// finite, or w fails.
func (pc *PointCloud) WritePLY(w io.Writer, format PLYFormat) error {
	if pc == nil {
		return errors.New("depth: WritePLY: point cloud is nil")
	}
	if format != PLYBinary && format != PLYASCII {
		return fmt.Errorf("depth: unknown PLY format %d", format)
	}
	organized := pc.Width != 0 || pc.Height != 0
	if organized && (pc.Width < 1 || pc.Height < 1 || pc.Width > planar.MaxSide || pc.Height > planar.MaxSide || pc.Width*pc.Height != len(pc.Points)) {
		return fmt.Errorf("depth: an organised cloud of %dx%d has %d points", pc.Width, pc.Height, len(pc.Points))
	}
	for i, p := range pc.Points {
		if organized && isNaN32(p.X) && isNaN32(p.Y) && isNaN32(p.Z) {
			continue
		}
		if !finite32(p.X) || !finite32(p.Y) || !finite32(p.Z) {
			return fmt.Errorf("depth: point %d has a non-finite coordinate", i)
		}
	}
	bw := bufio.NewWriterSize(w, 1<<16)
	enc := "binary_little_endian"
	if format == PLYASCII {
		enc = "ascii"
	}
	fmt.Fprintf(bw, "ply\nformat %s 1.0\ncomment parallax depth point cloud, metres, x right y down z forward\n", enc)
	if organized {
		fmt.Fprintf(bw, "comment organised: one point per pixel, row-major, NaN where there is no depth\nobj_info num_cols %d\nobj_info num_rows %d\n", pc.Width, pc.Height)
	}
	fmt.Fprintf(bw, "element vertex %d\nproperty float x\nproperty float y\nproperty float z\n", len(pc.Points))
	if pc.Color {
		bw.WriteString("property uchar red\nproperty uchar green\nproperty uchar blue\n")
	}
	bw.WriteString("end_header\n")
	var buf [15]byte
	line := make([]byte, 0, 64)
	for _, p := range pc.Points {
		if format == PLYASCII {
			line = strconv.AppendFloat(line[:0], float64(p.X), 'g', -1, 32)
			line = append(line, ' ')
			line = strconv.AppendFloat(line, float64(p.Y), 'g', -1, 32)
			line = append(line, ' ')
			line = strconv.AppendFloat(line, float64(p.Z), 'g', -1, 32)
			if pc.Color {
				line = fmt.Appendf(line, " %d %d %d", p.R, p.G, p.B)
			}
			line = append(line, '\n')
			bw.Write(line)
			continue
		}
		binary.LittleEndian.PutUint32(buf[0:], math.Float32bits(p.X))
		binary.LittleEndian.PutUint32(buf[4:], math.Float32bits(p.Y))
		binary.LittleEndian.PutUint32(buf[8:], math.Float32bits(p.Z))
		n := 12
		if pc.Color {
			buf[12], buf[13], buf[14] = p.R, p.G, p.B
			n = 15
		}
		bw.Write(buf[:n])
	}
	if err := bw.Flush(); err != nil {
		return fmt.Errorf("depth: writing PLY: %w", err)
	}
	return nil
}

func finite32(v float32) bool { return !math.IsNaN(float64(v)) && !math.IsInf(float64(v), 0) }

func isNaN32(v float32) bool { return v != v }

// SavePLY writes pc to path as PLY (see WritePLY), atomically.
func SavePLY(path string, pc *PointCloud, format PLYFormat) error {
	if pc == nil {
		return errors.New("depth: SavePLY: point cloud is nil")
	}
	return writeFileAtomic(path, func(w io.Writer) error { return pc.WritePLY(w, format) })
}

// Limits on a PLY header, so hostile input cannot make the reader buffer
// without end.
const (
	maxPLYLine        = 1024
	maxPLYHeaderLines = 256
	maxPLYProperties  = 64
)

// plyProperty is a scalar property of the vertex element.
type plyProperty struct {
	name string
	kind string // canonical type name: int8 … float64
	size int
}

var plyTypes = map[string]struct {
	kind string
	size int
}{
	"char": {"int8", 1}, "int8": {"int8", 1},
	"uchar": {"uint8", 1}, "uint8": {"uint8", 1},
	"short": {"int16", 2}, "int16": {"int16", 2},
	"ushort": {"uint16", 2}, "uint16": {"uint16", 2},
	"int": {"int32", 4}, "int32": {"int32", 4},
	"uint": {"uint32", 4}, "uint32": {"uint32", 4},
	"float": {"float32", 4}, "float32": {"float32", 4},
	"double": {"float64", 8}, "float64": {"float64", 8},
}

// ReadPLY reads the vertices of a PLY file in any of its three encodings
// (ascii, binary_little_endian, binary_big_endian). The first element must be
// "vertex", with scalar properties including x, y and z of any numeric type;
// if red, green and blue are present they must be uchar and the cloud has
// colour. Other vertex properties are skipped, and so is everything after
// the vertices. ReadPLY returns an error for a malformed header, more than
// planar.MaxPixels vertices, or truncated data; its allocation grows with the input
// actually read, whatever the header claims.
func ReadPLY(r io.Reader) (*PointCloud, error) {
	br := bufio.NewReaderSize(r, 1<<16)
	fail := func(format string, a ...any) (*PointCloud, error) {
		return nil, fmt.Errorf("depth: PLY: "+format, a...)
	}
	var (
		enc       string
		count     = -1
		props     []plyProperty
		inVertex  bool
		headerEnd bool
		cols      int // obj_info num_cols and num_rows of an organised cloud
		rows      int
	)
	for lines := 0; !headerEnd; lines++ {
		if lines == maxPLYHeaderLines {
			return fail("header longer than %d lines", maxPLYHeaderLines)
		}
		line, err := plyLine(br)
		if err != nil {
			return fail("reading the header: %v", err)
		}
		f := strings.Fields(line)
		if lines == 0 {
			if line != "ply" {
				return fail("missing the \"ply\" magic line")
			}
			continue
		}
		if len(f) == 0 {
			continue
		}
		switch f[0] {
		case "format":
			if len(f) != 3 || f[2] != "1.0" {
				return fail("bad format line %q", truncate(line))
			}
			switch f[1] {
			case "ascii", "binary_little_endian", "binary_big_endian":
				enc = f[1]
			default:
				return fail("unknown encoding %q", truncate(f[1]))
			}
		case "comment":
		case "obj_info":
			if len(f) == 3 {
				n, err := strconv.Atoi(f[2])
				switch {
				case f[1] == "num_cols" && err == nil && n > 0 && n <= planar.MaxSide:
					cols = n
				case f[1] == "num_rows" && err == nil && n > 0 && n <= planar.MaxSide:
					rows = n
				}
			}
		case "element":
			if len(f) != 3 {
				return fail("bad element line %q", truncate(line))
			}
			if count < 0 {
				if f[1] != "vertex" {
					return fail("the first element is %q, want \"vertex\"", truncate(f[1]))
				}
				n, err := strconv.Atoi(f[2])
				if err != nil || n < 0 || n > planar.MaxPixels {
					return fail("vertex count %q is not an integer in [0, %d]", truncate(f[2]), planar.MaxPixels)
				}
				count, inVertex = n, true
			} else {
				inVertex = false
			}
		case "property":
			if !inVertex {
				if count < 0 {
					return fail("property before any element")
				}
				continue // a later element, ignored
			}
			if len(f) != 3 {
				if len(f) > 1 && f[1] == "list" {
					return fail("list properties in the vertex element are not supported")
				}
				return fail("bad property line %q", truncate(line))
			}
			t, ok := plyTypes[f[1]]
			if !ok {
				return fail("unknown property type %q", truncate(f[1]))
			}
			if len(props) == maxPLYProperties {
				return fail("more than %d vertex properties", maxPLYProperties)
			}
			props = append(props, plyProperty{name: f[2], kind: t.kind, size: t.size})
		case "end_header":
			headerEnd = true
		default:
			return fail("unknown header keyword %q", truncate(f[0]))
		}
	}
	if enc == "" {
		return fail("no format line")
	}
	if count < 0 {
		return fail("no vertex element")
	}
	idx := map[string]int{}
	for i, p := range props {
		if _, dup := idx[p.name]; dup {
			return fail("vertex property %q appears twice", truncate(p.name))
		}
		idx[p.name] = i
	}
	for _, n := range []string{"x", "y", "z"} {
		if _, ok := idx[n]; !ok {
			return fail("vertex element has no property %q", n)
		}
	}
	colours := 0
	for _, n := range []string{"red", "green", "blue"} {
		if i, ok := idx[n]; ok {
			if props[i].kind != "uint8" {
				return fail("colour property %q must be uchar", n)
			}
			colours++
		}
	}
	if colours != 0 && colours != 3 {
		return fail("vertex element has some but not all of red, green, blue")
	}
	pc := &PointCloud{Color: colours == 3, Points: make([]Point, 0, min(count, 1<<14))}
	vals := make([]float64, len(props))
	var order binary.ByteOrder = binary.LittleEndian
	if enc == "binary_big_endian" {
		order = binary.BigEndian
	}
	stride := 0
	for _, p := range props {
		stride += p.size
	}
	rec := make([]byte, stride)
	ix, iy, iz := idx["x"], idx["y"], idx["z"]
	ir, ig, ib := idx["red"], idx["green"], idx["blue"]
	for v := 0; v < count; v++ {
		if enc == "ascii" {
			line, err := plyLine(br)
			if err != nil {
				return fail("vertex %d of %d: %v", v, count, err)
			}
			f := strings.Fields(line)
			if len(f) != len(props) {
				return fail("vertex %d has %d values, want %d", v, len(f), len(props))
			}
			for i, s := range f {
				x, err := parsePLYValue(s, props[i].kind)
				if err != nil {
					return fail("vertex %d, property %q: %v", v, props[i].name, err)
				}
				vals[i] = x
			}
		} else {
			if _, err := io.ReadFull(br, rec); err != nil {
				return fail("data truncated at vertex %d of %d", v, count)
			}
			off := 0
			for i, p := range props {
				vals[i] = decodePLYValue(rec[off:], p.kind, order)
				off += p.size
			}
		}
		p := Point{X: float32(vals[ix]), Y: float32(vals[iy]), Z: float32(vals[iz])}
		if pc.Color {
			p.R, p.G, p.B = uint8(vals[ir]), uint8(vals[ig]), uint8(vals[ib])
		}
		pc.Points = append(pc.Points, p)
	}
	if cols > 0 && rows > 0 && cols*rows == len(pc.Points) {
		pc.Width, pc.Height = cols, rows
	}
	return pc, nil
}

// LoadPLY reads the PLY file at path (see ReadPLY).
func LoadPLY(path string) (*PointCloud, error) {
	return loadFile(path, ReadPLY)
}

// plyLine reads one line of at most maxPLYLine bytes, without its "\n" or
// "\r\n".
func plyLine(br *bufio.Reader) (string, error) {
	line, err := headerText(br, maxPLYLine, "line", func(c byte) bool { return c == '\n' }, false)
	return strings.TrimSuffix(line, "\r"), err
}

// parsePLYValue parses an ASCII value of the given canonical type.
func parsePLYValue(s, kind string) (float64, error) {
	switch kind {
	case "float32", "float64":
		bits := 64
		if kind == "float32" {
			bits = 32
		}
		return strconv.ParseFloat(s, bits)
	case "int8", "int16", "int32":
		bits, _ := strconv.Atoi(kind[3:])
		v, err := strconv.ParseInt(s, 10, bits)
		return float64(v), err
	default: // uint8, uint16, uint32
		bits, _ := strconv.Atoi(kind[4:])
		v, err := strconv.ParseUint(s, 10, bits)
		return float64(v), err
	}
}

// decodePLYValue decodes a binary value of the given canonical type from b.
func decodePLYValue(b []byte, kind string, order binary.ByteOrder) float64 {
	switch kind {
	case "int8":
		return float64(int8(b[0]))
	case "uint8":
		return float64(b[0])
	case "int16":
		return float64(int16(order.Uint16(b)))
	case "uint16":
		return float64(order.Uint16(b))
	case "int32":
		return float64(int32(order.Uint32(b)))
	case "uint32":
		return float64(order.Uint32(b))
	case "float32":
		return float64(math.Float32frombits(order.Uint32(b)))
	default:
		return math.Float64frombits(order.Uint64(b))
	}
}
