package depth

import (
	"bytes"
	"image"
	"math"
	"path/filepath"
	"testing"
)

// TestInvalidEverywhere checks that one invalid pixel is stored the same
// way by each writer: NaN in the PFM, absent from the PLY, NaN in the
// organised PLY, 0 in the 16-bit PNG.
func TestInvalidEverywhere(t *testing.T) {
	z, err := NewDepth(image.Rect(0, 0, 3, 2))
	if err != nil {
		t.Fatal(err)
	}
	for i := range z.Pix {
		z.Pix[i], z.Mask[i] = 1+float32(i), 1
	}
	z.SetInvalid(1, 0)
	rig := &Rig{Width: 3, Height: 2, Fx: 2, Fy: 2, Cx: 1, Cy: 0.5, Baseline: 0.1, MaxDepth: 10}

	v := z.Values()
	if !math.IsNaN(float64(v[1])) || v[0] != 1 || v[5] != 6 {
		t.Errorf("Values %v", v)
	}
	p := filepath.Join(t.TempDir(), "z.pfm")
	if err := SaveMapPFM(p, &z.Map); err != nil {
		t.Fatal(err)
	}
	pix, w, h, _, err := LoadPFM(p)
	if err != nil {
		t.Fatal(err)
	}
	back, err := MapFromPFM(pix, w, h)
	if err != nil {
		t.Fatal(err)
	}
	if !math.IsNaN(float64(pix[1])) || back.Mask[1] != 0 || back.Valid() != 5 || back.Pix[4] != 5 {
		t.Errorf("PFM: %v, %d valid", pix, back.Valid())
	}

	plain, err := PointCloudFromDepth(z, nil, rig)
	if err != nil {
		t.Fatal(err)
	}
	if len(plain.Points) != 5 {
		t.Errorf("PLY: %d points, want 5", len(plain.Points))
	}
	grid, err := OrganizedPointCloud(z, nil, rig)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []PLYFormat{PLYBinary, PLYASCII} {
		var buf bytes.Buffer
		if err := grid.WritePLY(&buf, f); err != nil {
			t.Fatal(err)
		}
		got, err := ReadPLY(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if got.Width != 3 || got.Height != 2 || len(got.Points) != 6 {
			t.Fatalf("format %d: %dx%d, %d points", f, got.Width, got.Height, len(got.Points))
		}
		if q := got.Points[1]; !isNaN32(q.X) || !isNaN32(q.Y) || !isNaN32(q.Z) {
			t.Errorf("format %d: the invalid pixel is %+v", f, q)
		}
		// Pixel (2, 1), Z = 6: X = (2−1)·6/2, Y = (1−0.5)·6/2.
		if q := got.Points[5]; q.X != 3 || q.Y != 1.5 || q.Z != 6 {
			t.Errorf("format %d: pixel (2, 1) is %+v", f, q)
		}
	}
	// NaN is refused outside an organised cloud, and a grid must match.
	bad := &PointCloud{Points: grid.Points}
	if err := bad.WritePLY(&bytes.Buffer{}, PLYBinary); err == nil {
		t.Error("an unorganised cloud with NaN was written")
	}
	bad.Width, bad.Height = 2, 2
	if err := bad.WritePLY(&bytes.Buffer{}, PLYBinary); err == nil {
		t.Error("a 2x2 grid of 6 points was written")
	}

	var png bytes.Buffer
	if _, err := WritePNG16(&png, z); err != nil {
		t.Fatal(err)
	}
	zb, err := ReadPNG16(&png)
	if err != nil {
		t.Fatal(err)
	}
	if zb.Mask[1] != 0 || zb.Valid() != 5 {
		t.Errorf("PNG16: %d valid", zb.Valid())
	}
}
