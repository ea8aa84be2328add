package depth

import (
	"bytes"
	"image"
	"image/color"
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// plyRig is a small rig: f = 100 px, principal point (1.5, 1), so pixel
// (x, y) at depth Z back-projects to ((x−1.5)Z/100, (y−1)Z/80, Z).
var plyRig = &Rig{Width: 4, Height: 3, Baseline: 0.1, Fx: 100, Fy: 80, Cx: 1.5, Cy: 1, MaxDepth: 50}

func plyScene() (*Depth, *image.NRGBA) {
	z, err := NewDepth(image.Rect(0, 0, 4, 3))
	if err != nil {
		panic(err)
	}
	img := image.NewNRGBA(image.Rect(10, 20, 14, 23)) // origin not at (0, 0)
	for y := 0; y < 3; y++ {
		for x := 0; x < 4; x++ {
			z.Set(x, y, float32(1+x+4*y))
			img.SetNRGBA(10+x, 20+y, color.NRGBA{uint8(10 * x), uint8(10 * y), 200, 255})
		}
	}
	z.SetInvalid(1, 1)
	z.SetInvalid(3, 2)
	return z, img
}

func TestPointCloudFromDepth(t *testing.T) {
	z, img := plyScene()
	pc, err := PointCloudFromDepth(z, img, plyRig)
	if err != nil {
		t.Fatal(err)
	}
	if len(pc.Points) != 10 || !pc.Color {
		t.Fatalf("%d points (colour %v), want 10 with colour", len(pc.Points), pc.Color)
	}
	// Pixel (3, 1), depth 8: X = 1.5·8/100 = 0.12, Y = 0, colour (30, 10, 200).
	// Points are in row-major order with (1, 1) skipped: index 6.
	p := pc.Points[6]
	if math.Abs(float64(p.X)-0.12) > 1e-7 || p.Y != 0 || p.Z != 8 || p.R != 30 || p.G != 10 || p.B != 200 {
		t.Errorf("point 6 = %+v, want {0.12 0 8 30 10 200}", p)
	}
	// Pixel (0, 2), depth 9: X = −1.5·9/100, Y = 1·9/80.
	p = pc.Points[7]
	if math.Abs(float64(p.X)+0.135) > 1e-7 || math.Abs(float64(p.Y)-0.1125) > 1e-7 || p.Z != 9 {
		t.Errorf("point 7 = %+v", p)
	}
	if _, err := PointCloudFromDepth(z, image.NewRGBA(image.Rect(0, 0, 3, 3)), plyRig); err == nil {
		t.Error("image of another size: no error")
	}
	nc, err := PointCloudFromDepth(z, nil, plyRig)
	if err != nil || nc.Color || len(nc.Points) != 10 {
		t.Errorf("without image: %v points, colour %v, %v", len(nc.Points), nc.Color, err)
	}
}

func TestPLYRoundTrip(t *testing.T) {
	z, img := plyScene()
	pc, err := PointCloudFromDepth(z, img, plyRig)
	if err != nil {
		t.Fatal(err)
	}
	for _, format := range []PLYFormat{PLYBinary, PLYASCII} {
		for _, colour := range []bool{true, false} {
			src := *pc
			if !colour {
				src.Points = append([]Point(nil), pc.Points...)
				for i := range src.Points {
					src.Points[i].R, src.Points[i].G, src.Points[i].B = 0, 0, 0
				}
				src.Color = false
			}
			var buf bytes.Buffer
			if err := src.WritePLY(&buf, format); err != nil {
				t.Fatal(err)
			}
			// The header, checked line by line against the PLY format.
			enc := map[PLYFormat]string{PLYBinary: "binary_little_endian", PLYASCII: "ascii"}[format]
			header := "ply\nformat " + enc + " 1.0\n"
			if !strings.HasPrefix(buf.String(), header) {
				t.Errorf("header starts %q", buf.String()[:30])
			}
			want := []string{"element vertex 10", "property float x", "property float y", "property float z"}
			if colour {
				want = append(want, "property uchar red", "property uchar green", "property uchar blue")
			}
			want = append(want, "end_header")
			head := buf.String()[:strings.Index(buf.String(), "end_header\n")+len("end_header")]
			var got []string
			for _, l := range strings.Split(head, "\n")[2:] {
				if !strings.HasPrefix(l, "comment ") {
					got = append(got, l)
				}
			}
			if strings.Join(got, "|") != strings.Join(want, "|") {
				t.Errorf("%s colour %v header lines %q, want %q", enc, colour, got, want)
			}
			if format == PLYBinary {
				size := 12
				if colour {
					size = 15
				}
				if n := buf.Len() - len(head) - 1; n != 10*size {
					t.Errorf("binary body %d bytes, want %d", n, 10*size)
				}
			}
			back, err := ReadPLY(&buf)
			if err != nil {
				t.Fatal(err)
			}
			if back.Color != colour || len(back.Points) != 10 {
				t.Fatalf("read %d points, colour %v", len(back.Points), back.Color)
			}
			for i, p := range back.Points {
				if p != src.Points[i] {
					t.Errorf("%s: point %d = %+v, want %+v", enc, i, p, src.Points[i])
				}
			}
		}
	}
	path := filepath.Join(t.TempDir(), "cloud.ply")
	if err := SavePLY(path, pc, PLYBinary); err != nil {
		t.Fatal(err)
	}
	back, err := LoadPLY(path)
	if err != nil || len(back.Points) != 10 {
		t.Fatalf("LoadPLY: %v", err)
	}
}

// TestReadPLYForeign reads a hand-written big-endian file with double
// coordinates, an extra property and a face element after the vertices, as
// other programs write them.
func TestReadPLYForeign(t *testing.T) {
	var buf bytes.Buffer
	buf.WriteString("ply\r\nformat binary_big_endian 1.0\r\ncomment made by hand\r\nelement vertex 2\r\n" +
		"property double x\r\nproperty double y\r\nproperty double z\r\nproperty ushort intensity\r\n" +
		"element face 1\r\nproperty list uchar int vertex_indices\r\nend_header\r\n")
	for _, v := range [][4]float64{{1, 2, 3, 7}, {-1.5, 0.25, 8, 9}} {
		for _, c := range v[:3] {
			b := math.Float64bits(c)
			for k := 7; k >= 0; k-- {
				buf.WriteByte(byte(b >> (8 * k)))
			}
		}
		buf.Write([]byte{0, byte(v[3])})
	}
	buf.Write([]byte{3, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 2})
	pc, err := ReadPLY(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if pc.Color || len(pc.Points) != 2 || pc.Points[1] != (Point{X: -1.5, Y: 0.25, Z: 8}) {
		t.Errorf("read %+v", pc)
	}
	ascii := "ply\nformat ascii 1.0\nelement vertex 1\nproperty int z\nproperty char y\nproperty uchar x\nend_header\n4 -3 200\n"
	pc, err = ReadPLY(strings.NewReader(ascii))
	if err != nil || pc.Points[0] != (Point{X: 200, Y: -3, Z: 4}) {
		t.Errorf("ascii with other types: %+v, %v", pc, err)
	}
}

func TestReadPLYErrors(t *testing.T) {
	hdr := func(body string) string { return "ply\nformat ascii 1.0\n" + body }
	cases := []struct{ name, data, want string }{
		{"empty", "", "header"},
		{"no magic", "plx\n", "magic"},
		{"bad format", "ply\nformat binary 1.0\nend_header\n", "encoding"},
		{"no vertex", hdr("end_header\n"), "no vertex"},
		{"face first", hdr("element face 1\nend_header\n"), "first element"},
		{"huge count", hdr("element vertex 99999999999\nend_header\n"), "vertex count"},
		{"no z", hdr("element vertex 1\nproperty float x\nproperty float y\nend_header\n1 2\n"), `"z"`},
		{"list", hdr("element vertex 1\nproperty list uchar int x\nend_header\n"), "list"},
		{"bad type", hdr("element vertex 1\nproperty quad x\nend_header\n"), "type"},
		{"float colour", hdr("element vertex 1\nproperty float x\nproperty float y\nproperty float z\nproperty float red\nproperty float green\nproperty float blue\nend_header\n"), "uchar"},
		{"short ascii row", hdr("element vertex 1\nproperty float x\nproperty float y\nproperty float z\nend_header\n1 2\n"), "values"},
		{"bad number", hdr("element vertex 1\nproperty float x\nproperty float y\nproperty float z\nend_header\n1 2 zz\n"), "property"},
		{"uchar overflow", hdr("element vertex 1\nproperty float x\nproperty float y\nproperty uchar z\nend_header\n1 2 300\n"), "property"},
		{"truncated ascii", hdr("element vertex 3\nproperty float x\nproperty float y\nproperty float z\nend_header\n1 2 3\n"), "vertex 1"},
		{"truncated binary", "ply\nformat binary_little_endian 1.0\nelement vertex 1000000\nproperty float x\nproperty float y\nproperty float z\nend_header\n\x00\x00", "truncated"},
		{"endless header", "ply\n" + strings.Repeat("comment x\n", 1000), "lines"},
		{"long line", "ply\n" + strings.Repeat("c", 5000), "longer"},
		{"duplicate", hdr("element vertex 1\nproperty float x\nproperty float x\nproperty float y\nproperty float z\nend_header\n"), "twice"},
	}
	for _, c := range cases {
		_, err := ReadPLY(strings.NewReader(c.data))
		if err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want a depth: error mentioning %q", c.name, err, c.want)
		}
	}
	bad := &PointCloud{Points: []Point{{X: float32(math.NaN())}}}
	if err := bad.WritePLY(&bytes.Buffer{}, PLYASCII); err == nil {
		t.Error("NaN point: no error")
	}
}

// TestPointCloudColourPaths: the RGBA fast path un-premultiplies, and the
// general path (here *image.Gray) gives grey colours.
func TestPointCloudColourPaths(t *testing.T) {
	z, _ := plyScene()
	rgba := image.NewRGBA(image.Rect(0, 0, 4, 3))
	rgba.SetRGBA(0, 0, color.RGBA{50, 25, 0, 128}) // premultiplied: 50/128·255 ≈ 100
	rgba.SetRGBA(1, 0, color.RGBA{1, 2, 3, 255})
	pc, err := PointCloudFromDepth(z, rgba, plyRig)
	if err != nil {
		t.Fatal(err)
	}
	if p := pc.Points[0]; p.R != 99 || p.G != 49 || p.B != 0 {
		t.Errorf("half-transparent pixel: %d %d %d, want 99 49 0", p.R, p.G, p.B)
	}
	if p := pc.Points[1]; p.R != 1 || p.G != 2 || p.B != 3 {
		t.Errorf("opaque pixel: %d %d %d", p.R, p.G, p.B)
	}
	gray := image.NewGray(image.Rect(0, 0, 4, 3))
	gray.Pix[2] = 77
	pc, err = PointCloudFromDepth(z, gray, plyRig)
	if err != nil {
		t.Fatal(err)
	}
	if p := pc.Points[2]; p.R != 77 || p.G != 77 || p.B != 77 {
		t.Errorf("grey pixel: %d %d %d", p.R, p.G, p.B)
	}
}

// TestReadPLYBinaryTypes decodes every PLY scalar type from a hand-made
// little-endian record.
func TestReadPLYBinaryTypes(t *testing.T) {
	var buf bytes.Buffer
	buf.WriteString("ply\nformat binary_little_endian 1.0\nelement vertex 1\n" +
		"property char a\nproperty short b\nproperty ushort c\nproperty int x\n" +
		"property uint y\nproperty float64 z\nproperty uint8 red\nproperty uchar green\nproperty uchar blue\nend_header\n")
	buf.Write([]byte{0xfe})                   // char −2
	buf.Write([]byte{0xfd, 0xff})             // short −3
	buf.Write([]byte{0x10, 0x00})             // ushort 16
	buf.Write([]byte{0xfb, 0xff, 0xff, 0xff}) // int −5
	buf.Write([]byte{0x07, 0x00, 0x00, 0x00}) // uint 7
	z := math.Float64bits(2.5)
	for k := 0; k < 8; k++ {
		buf.WriteByte(byte(z >> (8 * k)))
	}
	buf.Write([]byte{9, 8, 7})
	pc, err := ReadPLY(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if !pc.Color || pc.Points[0] != (Point{X: -5, Y: 7, Z: 2.5, R: 9, G: 8, B: 7}) {
		t.Errorf("read %+v", pc)
	}
}
