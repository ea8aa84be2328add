package model

import (
	"context"
	"image"
	"math"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
)

// TestEstimateAspect checks that Estimate follows depth's one aspect-ratio
// rule (issue 11 item 8): an image of another aspect ratio than the rig's is
// refused, naming both sizes, unless StretchRig is set, and then the rig is
// stretched axis by axis (depth.Rig.Stretched).
func TestEstimateAspect(t *testing.T) {
	w := tinyWeights(t)
	rig := &depth.Rig{Width: 128, Height: 64, Baseline: 0.1, Fx: 100, Fy: 100, Cx: 64, Cy: 32, MaxDepth: 50}
	square := image.NewRGBA(image.Rect(0, 0, 64, 64))
	for k := range square.Pix {
		square.Pix[k] = uint8(k * 7 % 251)
	}
	est, err := NewEstimator(w, &EstimatorOptions{Rig: rig})
	if err != nil {
		t.Fatal(err)
	}
	_, err = est.Estimate(context.Background(), square)
	if err == nil || !strings.HasPrefix(err.Error(), "model: ") || !strings.Contains(err.Error(), "64x64") || !strings.Contains(err.Error(), "128x64") {
		t.Errorf("64x64 image with a 128x64 rig: error %v, want one naming both sizes", err)
	}
	// Within 1 % (127x64 is 0.8 % narrower) it is rescaled.
	if _, err := est.Estimate(context.Background(), image.NewRGBA(image.Rect(0, 0, 127, 64))); err != nil {
		t.Errorf("127x64 image with a 128x64 rig: %v", err)
	}
	stretch, err := NewEstimator(w, &EstimatorOptions{Rig: rig, StretchRig: true})
	if err != nil {
		t.Fatal(err)
	}
	got, err := stretch.Estimate(context.Background(), square)
	if err != nil {
		t.Fatalf("StretchRig: %v", err)
	}
	if got.Rig.Width != 64 || got.Rig.Height != 64 || math.Abs(got.Rig.Fx-50) > 1e-12 || got.Rig.Fy != 100 {
		t.Errorf("StretchRig: rig %+v, want 64x64 with fx 50, fy 100", *got.Rig)
	}
}
