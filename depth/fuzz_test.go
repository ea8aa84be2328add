package depth

import (
	"bytes"
	"image"
	"image/png"
	"runtime"
	"strings"
	"testing"
)

// The fuzz targets check that the decoders never panic or hang and that what
// they return is consistent with the input's size, so a hostile header cannot
// make them allocate beyond the input they were given. Run one with e.g.
//
//	go test ./depth -run '^$' -fuzz FuzzReadPFM -fuzztime 30s
//
// Without -fuzz, the seeds run as ordinary tests.

func FuzzReadRig(f *testing.F) {
	var buf bytes.Buffer
	motorcycleRig().Write(&buf)
	f.Add(buf.Bytes())
	f.Add([]byte(`{"format":"parallax-rig","version":1}`))
	f.Add([]byte(`{"version":2,"version":2,"a":{"b":[{"c":1,"c":2}]}}`))
	f.Add([]byte(`{"width_px":1e400}`))
	f.Add([]byte("[[[[[[[[[[[[[[[[[[[["))
	f.Fuzz(func(t *testing.T, data []byte) {
		rig, err := ReadRig(bytes.NewReader(data))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "depth: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		if err := rig.Validate(); err != nil {
			t.Fatalf("ReadRig accepted an invalid rig: %v", err)
		}
		// What was read writes and reads back to the same rig.
		var out bytes.Buffer
		if err := rig.Write(&out); err != nil {
			t.Fatal(err)
		}
		again, err := ReadRig(&out)
		if err != nil || *again != *rig {
			t.Fatalf("rewrite round trip: %+v, %v", again, err)
		}
	})
}

func FuzzReadPFM(f *testing.F) {
	var buf bytes.Buffer
	WritePFM(&buf, []float32{1, 2, 3, 4, 5, 6}, 3, 2, 1)
	f.Add(buf.Bytes())
	buf.Reset()
	WritePFM(&buf, []float32{1, 2, 3, 4, 5, 6}, 1, 2, 3)
	f.Add(buf.Bytes())
	f.Add([]byte("Pf\n32768 1024\n-1\n\x00\x00\x00\x00"))
	f.Add([]byte("PF 2 2 1.0 "))
	f.Fuzz(func(t *testing.T, data []byte) {
		pix, w, h, c, err := ReadPFM(bytes.NewReader(data))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "depth: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		if len(pix) != w*h*c || 4*len(pix) > len(data) {
			t.Fatalf("%d samples for %dx%dx%d from %d bytes", len(pix), w, h, c, len(data))
		}
	})
}

func FuzzReadPLY(f *testing.F) {
	z, img := plyScene()
	pc, _ := PointCloudFromDepth(z, img, plyRig)
	for _, format := range []PLYFormat{PLYBinary, PLYASCII} {
		var buf bytes.Buffer
		pc.WritePLY(&buf, format)
		f.Add(buf.Bytes())
	}
	f.Add([]byte("ply\nformat binary_big_endian 1.0\nelement vertex 33554432\nproperty double x\nproperty double y\nproperty double z\nend_header\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		pc, err := ReadPLY(bytes.NewReader(data))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "depth: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		// Every vertex takes at least one byte (binary: 3 one-byte
		// properties; ASCII: a value and a newline).
		if len(pc.Points) > len(data) {
			t.Fatalf("%d points from %d bytes", len(pc.Points), len(data))
		}
	})
}

func FuzzReadPNG16(f *testing.F) {
	var buf bytes.Buffer
	g := image.NewGray16(image.Rect(0, 0, 5, 3))
	for i := range g.Pix {
		g.Pix[i] = uint8(i * 37)
	}
	png.Encode(&buf, g)
	f.Add(buf.Bytes())
	f.Add(hugePNGHeader(4000, 4000))
	f.Add(hugePNGHeader(1, 1))
	f.Fuzz(func(t *testing.T, data []byte) {
		d, err := ReadPNG16(bytes.NewReader(data))
		if err != nil {
			if !strings.HasPrefix(err.Error(), "depth: ") {
				t.Fatalf("error without the package prefix: %v", err)
			}
			return
		}
		if n := d.Rect.Dx() * d.Rect.Dy(); n*2 > maxDeflateRatio*len(data) {
			t.Fatalf("%v from %d bytes", d.Rect, len(data))
		}
	})
}

// TestDecodersBoundAllocation feeds each decoder a short file whose header
// claims a large image, and checks how much memory the failed decode
// allocated (runtime.MemStats.TotalAlloc, which only grows, so concurrent
// tests can only make the figure larger, never hide an allocation).
func TestDecodersBoundAllocation(t *testing.T) {
	cases := []struct {
		name string
		read func() error
	}{
		{"PFM 32768x1024x3", func() error {
			_, _, _, _, err := ReadPFM(strings.NewReader("PF\n32768 1024\n-1\n" + strings.Repeat("\x00", 100)))
			return err
		}},
		{"PLY 33554432 vertices", func() error {
			_, err := ReadPLY(strings.NewReader("ply\nformat binary_little_endian 1.0\nelement vertex 33554432\nproperty double x\nproperty double y\nproperty double z\nend_header\n" + strings.Repeat("\x00", 100)))
			return err
		}},
		{"PNG16 4000x4000", func() error {
			_, err := ReadPNG16(bytes.NewReader(hugePNGHeader(4000, 4000)))
			return err
		}},
		{"PNG16 32768x1024", func() error {
			_, err := ReadPNG16(bytes.NewReader(hugePNGHeader(32768, 1024)))
			return err
		}},
		{"rig of 1 MiB", func() error {
			_, err := ReadRig(strings.NewReader(`{"format":"` + strings.Repeat("x", 1<<20) + `"}`))
			return err
		}},
	}
	// Each claimed image is 32 MiB or more; a decoder that believed the
	// header would allocate that much. The decoders' own buffers are below
	// 2 MiB (the rig case builds its 1 MiB input inside the measurement).
	const limit = 4 << 20
	for _, c := range cases {
		var before, after runtime.MemStats
		runtime.ReadMemStats(&before)
		err := c.read()
		runtime.ReadMemStats(&after)
		if err == nil {
			t.Errorf("%s: no error", c.name)
		}
		if got := after.TotalAlloc - before.TotalAlloc; got > limit {
			t.Errorf("%s: allocated %d bytes, limit %d", c.name, got, limit)
		}
	}
}
