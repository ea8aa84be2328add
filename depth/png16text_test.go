package depth

import (
	"bytes"
	"encoding/json"
	"image"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func textDepth(t *testing.T) *Depth {
	t.Helper()
	d, err := NewDepth(image.Rect(0, 0, 5, 3))
	if err != nil {
		t.Fatal(err)
	}
	for i := range d.Pix {
		if i%4 != 3 {
			d.Pix[i], d.Mask[i] = 0.25+float32(i)*0.731, 1
		}
	}
	return d
}

// TestPNG16TextRoundTrip writes a depth map with its rig and reads both
// back; the file also decodes with the standard library's image/png (an
// outside decoder), which skips the text chunks.
func TestPNG16TextRoundTrip(t *testing.T) {
	d := textDepth(t)
	rig := &Rig{Width: 5, Height: 3, Fx: 4.5, Fy: 4.5, Cx: 2, Cy: 1, Baseline: 0.1, MinDepth: 0.2, MaxDepth: 20}
	var buf bytes.Buffer
	if _, err := WritePNG16Rig(&buf, d, rig); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"depth.unit\x00mm", "depth.scale_m\x000.001", "depth.invalid\x000", "depth.rig\x00{"} {
		if !bytes.Contains(buf.Bytes(), []byte(k)) {
			t.Errorf("file lacks %q", k)
		}
	}
	std, err := png.Decode(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatalf("image/png: %v", err)
	}
	g := std.(*image.Gray16)
	got, info, err := ReadPNG16Info(bytes.NewReader(buf.Bytes()))
	if err != nil {
		t.Fatal(err)
	}
	if !info.Described || info.Unit != "mm" || info.Scale != 0.001 || info.Invalid != 0 || info.Rig == nil || *info.Rig != *rig {
		t.Fatalf("info %+v, rig %+v", info, info.Rig)
	}
	for i := range d.Pix {
		if got.Mask[i] != d.Mask[i] {
			t.Fatalf("pixel %d: mask %d, want %d", i, got.Mask[i], d.Mask[i])
		}
		mm := math.Round(float64(d.Pix[i]) * 1000)
		if d.Mask[i] == 0 {
			mm = 0
		}
		if lv := g.Gray16At(i%5, i/5).Y; float64(lv) != mm || math.Abs(float64(got.Pix[i])-mm/1000) > 1e-6*mm/1000 {
			t.Fatalf("pixel %d: level %d, read %v m, want %v mm", i, lv, got.Pix[i], mm)
		}
	}
	// The rig must fit the map.
	small := *rig
	small.Width, small.Height = 10, 6
	if _, err := WritePNG16Rig(&buf, d, &small); err == nil || !strings.HasPrefix(err.Error(), "depth: ") {
		t.Errorf("rig of another size: %v", err)
	}
}

// TestPNG16WithoutText reads the 16-bit PNG OpenCV 4.6.0 wrote
// (testdata/depth/make.py), which has no text chunks: millimetres, 0
// invalid, as before.
func TestPNG16WithoutText(t *testing.T) {
	raw, err := os.ReadFile("../testdata/depth/cv2.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		PNG16 struct {
			Width, Height int
			MM            []int
		}
	}
	if err := json.Unmarshal(raw, &ref); err != nil {
		t.Fatal(err)
	}
	d, info, err := LoadPNG16Info("../testdata/depth/cv2_depth_mm.png")
	if err != nil {
		t.Fatal(err)
	}
	if info.Described || info.Scale != 0.001 || info.Rig != nil {
		t.Errorf("info %+v", info)
	}
	for i, mm := range ref.PNG16.MM {
		v, ok := d.At(i%ref.PNG16.Width, i/ref.PNG16.Width)
		if ok != (mm != 0) || math.Abs(float64(v)-float64(mm)/1000) > 1e-6*float64(mm)/1000 {
			t.Fatalf("pixel %d: %v %v, want %d mm", i, v, ok, mm)
		}
	}
}

// TestPNG16TextScale checks that a file stating another scale reads in
// metres at that scale, and that a malformed or corrupt text chunk is an
// error naming the file.
func TestPNG16TextScale(t *testing.T) {
	g := image.NewGray16(image.Rect(0, 0, 2, 1))
	g.Pix = []byte{0x03, 0xe8, 0, 0} // 1000, 0
	enc := func(texts [][2]string) []byte {
		var b bytes.Buffer
		if err := encodeGray16(&b, g, texts); err != nil {
			t.Fatal(err)
		}
		return b.Bytes()
	}
	d, info, err := ReadPNG16Info(bytes.NewReader(enc([][2]string{{"depth.unit", "0.1 mm"}, {"depth.scale_m", "0.0001"}})))
	if err != nil {
		t.Fatal(err)
	}
	if v, ok := d.At(0, 0); !ok || math.Abs(float64(v)-0.1) > 1e-7 || info.Unit != "0.1 mm" {
		t.Errorf("level 1000 at 0.1 mm: %v %v, info %+v", v, ok, info)
	}
	if _, ok := d.At(1, 0); ok {
		t.Error("level 0 is valid")
	}
	dir := t.TempDir()
	corrupt := enc([][2]string{{"depth.unit", "mm"}})
	corrupt[bytes.Index(corrupt, []byte("mm"))] = 'x' // the CRC no longer matches
	for name, data := range map[string][]byte{
		"scale.png":   enc([][2]string{{"depth.scale_m", "abc"}}),
		"invalid.png": enc([][2]string{{"depth.invalid", "65535"}}),
		"rig.png":     enc([][2]string{{"depth.rig", "{}"}}),
		"crc.png":     corrupt,
	} {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		if _, err := LoadPNG16(p); err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), p) {
			t.Errorf("%s: %v", name, err)
		}
	}
}
