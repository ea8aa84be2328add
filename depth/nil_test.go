package depth

import (
	"bytes"
	"image"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

// TestNilInputs checks that nil data arguments give errors starting with
// "depth: " (they panicked before), and that the functions without an
// error result leave a nil map alone.
func TestNilInputs(t *testing.T) {
	var nilRig *Rig
	var pc *PointCloud
	for _, tc := range []struct {
		name string
		f    func() error
	}{
		{"DisparityFromImage", func() error { _, err := DisparityFromImage(nil, 1); return err }},
		{"DepthFromImage", func() error { _, err := DepthFromImage(nil, 1); return err }},
		{"SavePNG", func() error { return SavePNG(t.TempDir()+"/x.png", nil) }},
		{"WritePLY", func() error { return pc.WritePLY(&bytes.Buffer{}, PLYBinary) }},
		{"DepthMapFromFraction", func() error { _, err := nilRig.DepthMapFromFraction(planar.New(1, 1, 2, 4), 0); return err }},
	} {
		func() {
			defer func() {
				if r := recover(); r != nil {
					t.Errorf("%s panics: %v", tc.name, r)
				}
			}()
			if err := tc.f(); err == nil || !strings.HasPrefix(err.Error(), "depth: ") {
				t.Errorf("%s: error %v, want one starting with depth:", tc.name, err)
			}
		}()
	}
	rig := &Rig{Width: 4, Height: 2, Fx: 100, Fy: 100, Cx: 1.5, Cy: 0.5, Baseline: 0.1, MaxDepth: 10}
	rig.MaskRange(nil)
	c, err := NewConfidence(image.Rect(0, 0, 2, 2))
	if err != nil {
		t.Fatal(err)
	}
	c.Threshold(nil, 0.5)
}
