package data

import (
	"bytes"
	"context"
	"encoding/binary"
	"hash/crc32"
	"image"
	"image/png"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
)

// TestLoadHostileSizes checks that sizes which would need an absurd
// allocation are errors, not panics: an output size within MaxSide on each
// side but beyond MaxPixels in area, and an image file replaced after Open
// by one whose header claims a huge size.
func TestLoadHostileSizes(t *testing.T) {
	dir := writeDataset(t, fixture{w: 32, h: 16, d: 2}, "a")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, sz := range [][2]int{{1 << 15, 1 << 15}, {1 << 15, 1 << 11}, {0, 16}, {32, -1}} {
		_, err := LoadSample(ds, 0, sz[0], sz[1])
		if err == nil || !strings.HasPrefix(err.Error(), "data: ") {
			t.Errorf("Load(%d×%d): error %v, want one starting with data:", sz[0], sz[1], err)
		}
	}
	// A valid PNG header for 30000×30000 pixels, written after Open: Load
	// must refuse it from the header, before decoding any pixel.
	var b bytes.Buffer
	if err := png.Encode(&b, image.NewGray(image.Rect(0, 0, 1, 1))); err != nil {
		t.Fatal(err)
	}
	hdr := b.Bytes()
	// IHDR is the first chunk: length at 8, type at 12, width and height at
	// 16 and 20, CRC over type and data at 29 (PNG specification, 5.3, 11.2.2).
	binary.BigEndian.PutUint32(hdr[16:], 30000)
	binary.BigEndian.PutUint32(hdr[20:], 30000)
	binary.BigEndian.PutUint32(hdr[29:], crc32.ChecksumIEEE(hdr[12:29]))
	if c, err := png.DecodeConfig(bytes.NewReader(hdr)); (err != nil || c.Width != 30000) && strconv.IntSize == 64 {
		// Where int has 32 bits image/png refuses the header itself
		// ("dimension overflow"); Load must refuse the file all the same.
		t.Fatalf("patched header: %+v %v", c, err)
	}
	if err := os.WriteFile(filepath.Join(dir, "left", "a.png"), hdr, 0o644); err != nil {
		t.Fatal(err)
	}
	var before, after runtime.MemStats
	runtime.ReadMemStats(&before)
	_, err = LoadSample(ds, 0, 32, 16)
	runtime.ReadMemStats(&after)
	wantErr(t, err, "left/a.png")
	// Decoding the pixels would allocate 900 MB before failing.
	if a := after.TotalAlloc - before.TotalAlloc; a > 16<<20 {
		t.Errorf("Load of a hostile header allocated %d bytes", a)
	}
}

// TestLoaderHostileOptions checks options that would ask for absurd
// allocations: a batch beyond planar.MaxValues is an error (found without
// allocating it), and a huge Prefetch is lowered to the number of pairs
// (make(chan) panicked on it).
func TestLoaderHostileOptions(t *testing.T) {
	dir := writeDataset(t, fixture{w: 32, h: 16, d: 2}, "a", "b")
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range []Options{{Width: 32, Height: 16, BatchSize: math.MaxInt}, {Width: 1 << 15, Height: 1 << 15}, {Width: 1 << 20, Height: 1}} {
		if _, err := NewLoader(ds, &o); err == nil || !strings.HasPrefix(err.Error(), "data: ") {
			t.Errorf("%+v: error %v", o, err)
		}
	}
	l, err := NewLoader(ds, &Options{Width: 32, Height: 16, BatchSize: 1, Prefetch: math.MaxInt})
	if err != nil {
		t.Fatal(err)
	}
	it := l.Epoch(context.Background(), 0)
	defer it.Close()
	for i := 0; i < 2; i++ {
		b, err := it.Next()
		if err != nil || b == nil || len(b.Names) != 1 {
			t.Fatalf("batch %d: %+v %v", i, b, err)
		}
	}
	if b, err := it.Next(); b != nil || err != io.EOF {
		t.Errorf("after the epoch: %+v %v, want nil and io.EOF", b, err)
	}
}
