package depth

import (
	"bytes"
	"encoding/binary"
	"encoding/json"
	"hash/crc32"
	"image"
	"image/color"
	"image/png"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestPNG16RoundTrip: every 16-bit level survives encode → decode → encode
// bit-exactly, with bounds that do not start at the origin.
func TestPNG16RoundTrip(t *testing.T) {
	src := image.NewGray16(image.Rect(3, 5, 3+256, 5+256))
	for i := 0; i < 65536; i++ {
		src.SetGray16(3+i%256, 5+i/256, color.Gray16{Y: uint16(i)})
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, src); err != nil {
		t.Fatal(err)
	}
	d, err := ReadPNG16(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if d.Valid() != 65535 {
		t.Errorf("%d valid pixels, want 65535 (level 0 invalid)", d.Valid())
	}
	if v, ok := d.At(1, 0); !ok || v != float32(0.001) {
		t.Errorf("level 1 reads as %v, %v; want 0.001 m", v, ok)
	}
	back, dropped := d.Gray16()
	if dropped != 0 {
		t.Errorf("%d pixels dropped", dropped)
	}
	for i := 0; i < 65536; i++ {
		if got := back.Gray16At(i%256, i/256).Y; got != uint16(i) {
			t.Fatalf("level %d came back as %d", i, got)
		}
	}
	path := filepath.Join(t.TempDir(), "d.png")
	if n, err := SavePNG16(path, d); err != nil || n != 0 {
		t.Fatalf("SavePNG16: %d, %v", n, err)
	}
	again, err := LoadPNG16(path)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range d.Pix {
		if math.Float32bits(again.Pix[i]) != math.Float32bits(v) || again.Mask[i] != d.Mask[i] {
			t.Fatalf("pixel %d: %v (mask %d) after the file round trip, want %v (mask %d)", i, again.Pix[i], again.Mask[i], v, d.Mask[i])
		}
	}
}

func TestPNG16Rounding(t *testing.T) {
	// 1.2344 m → 1234 mm, 1.2346 → 1235; 0.0004 m rounds to 0 and 70 m
	// exceeds 65.535 m: both dropped (stored as invalid) and counted.
	d := depthRow(1.2344, 1.2346, 0.0004, 70, 0)
	img, dropped := d.Gray16()
	if dropped != 2 {
		t.Errorf("dropped %d, want 2", dropped)
	}
	for x, want := range []uint16{1234, 1235, 0, 0, 0} {
		if got := img.Gray16At(x, 0).Y; got != want {
			t.Errorf("pixel %d: %d mm, want %d", x, got, want)
		}
	}
}

// TestPNG16OpenCV reads a 16-bit PNG written by OpenCV 4.6.0 cv2.imwrite
// (testdata/depth/cv2_depth_mm.png, values in cv2.json, made by make.py).
func TestPNG16OpenCV(t *testing.T) {
	fx := loadCV2Fixture(t)
	d, err := LoadPNG16("../testdata/depth/" + fx.PNG16.File)
	if err != nil {
		t.Fatal(err)
	}
	if d.Rect != image.Rect(0, 0, fx.PNG16.Width, fx.PNG16.Height) {
		t.Fatalf("bounds %v", d.Rect)
	}
	img, _ := d.Gray16()
	for i, mm := range fx.PNG16.MM {
		x, y := i%fx.PNG16.Width, i/fx.PNG16.Width
		if got := img.Gray16At(x, y).Y; int(got) != mm {
			t.Errorf("(%d, %d): %d mm, OpenCV wrote %d", x, y, got, mm)
		}
		if _, ok := d.At(x, y); ok != (mm != 0) {
			t.Errorf("(%d, %d): valid %v for %d mm", x, y, ok, mm)
		}
	}
}

type cv2Fixture struct {
	PFM struct {
		File          string
		Width, Height int
		Pix           []string
	}
	PNG16 struct {
		File          string
		Width, Height int
		MM            []int
	}
}

func loadCV2Fixture(t *testing.T) *cv2Fixture {
	t.Helper()
	data, err := os.ReadFile("../testdata/depth/cv2.json")
	if err != nil {
		t.Fatal(err)
	}
	var fx cv2Fixture
	if err := json.Unmarshal(data, &fx); err != nil {
		t.Fatal(err)
	}
	return &fx
}

// TestPFMOpenCV reads a PFM written by OpenCV 4.6.0 cv2.imwrite
// (testdata/depth/cv2_gray.pfm, values in cv2.json).
func TestPFMOpenCV(t *testing.T) {
	fx := loadCV2Fixture(t)
	pix, w, h, c, err := LoadPFM("../testdata/depth/" + fx.PFM.File)
	if err != nil {
		t.Fatal(err)
	}
	if w != fx.PFM.Width || h != fx.PFM.Height || c != 1 {
		t.Fatalf("size %dx%dx%d", w, h, c)
	}
	for i, s := range fx.PFM.Pix {
		want, err := strconv.ParseFloat(s, 32)
		if err != nil {
			t.Fatal(err)
		}
		if pix[i] != float32(want) {
			t.Errorf("sample %d = %v, OpenCV wrote %v", i, pix[i], want)
		}
	}
	// Our writer produces the same samples OpenCV stored, in the same order.
	var buf bytes.Buffer
	if err := WritePFM(&buf, pix, w, h, 1); err != nil {
		t.Fatal(err)
	}
	raw, _ := os.ReadFile("../testdata/depth/" + fx.PFM.File)
	if got, want := buf.Bytes()[len("Pf\n5 4\n-1.0\n"):], raw[len("Pf\n5 4\n-1\n"):]; !bytes.Equal(got, want) {
		t.Error("WritePFM's sample bytes differ from OpenCV's")
	}
}

func TestReadPNG16Errors(t *testing.T) {
	var rgb bytes.Buffer
	png.Encode(&rgb, image.NewRGBA(image.Rect(0, 0, 2, 2)))
	var gray8 bytes.Buffer
	png.Encode(&gray8, image.NewGray(image.Rect(0, 0, 2, 2)))
	var g16 bytes.Buffer
	png.Encode(&g16, image.NewGray16(image.Rect(0, 0, 40, 40)))
	cases := []struct {
		name string
		data []byte
		want string
	}{
		{"empty", nil, "PNG16"},
		{"not PNG", []byte("hello"), "PNG16"},
		{"RGBA", rgb.Bytes(), "16-bit grey"},
		{"8-bit grey", gray8.Bytes(), "16-bit grey"},
		{"truncated", g16.Bytes()[:g16.Len()/2], "PNG16"},
		// Where int has 32 bits image/png refuses the header itself.
		{"huge header", hugePNGHeader(60000, 60000), map[bool]string{true: "out of range", false: "dimension overflow"}[strconv.IntSize == 64]},
		{"header without data", hugePNGHeader(4000, 4000), "cannot fit"},
	}
	for _, c := range cases {
		_, err := ReadPNG16(bytes.NewReader(c.data))
		if err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want a depth: error mentioning %q", c.name, err, c.want)
		}
	}
}

// hugePNGHeader returns the signature and IHDR chunk of a 16-bit grey PNG
// of w × h pixels, with no data.
func hugePNGHeader(w, h uint32) []byte {
	var buf bytes.Buffer
	png.Encode(&buf, image.NewGray16(image.Rect(0, 0, 1, 1)))
	b := buf.Bytes()[:33] // signature (8) + IHDR length, type, 13 bytes, CRC
	b = append([]byte(nil), b...)
	binary.BigEndian.PutUint32(b[16:], w)
	binary.BigEndian.PutUint32(b[20:], h)
	binary.BigEndian.PutUint32(b[29:], crc32.ChecksumIEEE(b[12:29]))
	return b
}

func TestDepthFromImageFastPaths(t *testing.T) {
	// The Gray16 and Gray fast paths agree with the general path (an
	// image.Image that is neither).
	r := rand.New(rand.NewPCG(1, 2))
	g16 := image.NewGray16(image.Rect(1, 2, 9, 7))
	g8 := image.NewGray(g16.Rect)
	for y := g16.Rect.Min.Y; y < g16.Rect.Max.Y; y++ {
		for x := g16.Rect.Min.X; x < g16.Rect.Max.X; x++ {
			g16.SetGray16(x, y, color.Gray16{Y: uint16(r.IntN(3) * r.IntN(65536))})
			g8.SetGray(x, y, color.Gray{Y: uint8(r.IntN(3) * r.IntN(256))})
		}
	}
	for _, img := range []image.Image{g16, g8} {
		fast, err := DisparityFromImage(img, 1.0/256)
		if err != nil {
			t.Fatal(err)
		}
		slow, err := DisparityFromImage(plainImage{img}, 1.0/256)
		if err != nil {
			t.Fatal(err)
		}
		if fast.Rect != img.Bounds() {
			t.Errorf("bounds %v, want %v", fast.Rect, img.Bounds())
		}
		for i := range fast.Pix {
			if fast.Pix[i] != slow.Pix[i] || fast.Mask[i] != slow.Mask[i] {
				t.Fatalf("%T: pixel %d fast %v/%d, general %v/%d", img, i, fast.Pix[i], fast.Mask[i], slow.Pix[i], slow.Mask[i])
			}
		}
	}
	// 16-bit level 256 at scale 1/256 is 1 px.
	g := image.NewGray16(image.Rect(0, 0, 1, 1))
	g.SetGray16(0, 0, color.Gray16{Y: 256})
	d, _ := DisparityFromImage(g, 1.0/256)
	if v, ok := d.At(0, 0); !ok || v != 1 {
		t.Errorf("level 256 / 256 = %v, %v", v, ok)
	}
	if _, err := DepthFromImage(g, 0); err == nil {
		t.Error("scale 0: no error")
	}
}

// plainImage hides the concrete type of an image, to force general paths.
type plainImage struct{ image.Image }
