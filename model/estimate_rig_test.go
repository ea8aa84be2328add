package model

import (
	"context"
	"image"
	"reflect"
	"strings"
	"testing"
)

// TestSetRig: an estimate made without a rig and given one with SetRig has
// the same bits as one made by an Estimator with that rig (depth, the
// range rule's masks, the scaled rig), at the rig's size and at another
// size of its aspect ratio; a rig of another aspect ratio is refused, so no
// metric depth comes silently from a rig of another shape.
func TestSetRig(t *testing.T) {
	img, rig := demoInputs(t)
	plain, err := NewEstimator(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	rigged, err := NewEstimator(nil, &EstimatorOptions{Rig: rig})
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	b := img.Bounds()
	half := image.NewRGBA(image.Rect(0, 0, b.Dx()/2, b.Dy()/2))
	for y := range half.Rect.Dy() {
		for x := range half.Rect.Dx() {
			half.Set(x, y, img.At(b.Min.X+2*x, b.Min.Y+2*y))
		}
	}
	for _, in := range []image.Image{img, half} {
		want, err := rigged.Estimate(ctx, in)
		if err != nil {
			t.Fatal(err)
		}
		got, err := plain.Estimate(ctx, in)
		if err != nil {
			t.Fatal(err)
		}
		if err := got.SetRig(rig); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got.Depth, want.Depth) || !reflect.DeepEqual(got.Disparity, want.Disparity) || *got.Rig != *want.Rig {
			t.Errorf("%v: SetRig's estimate differs from the rigged Estimator's", in.Bounds())
		}
		if err := got.SetRig(rig); err == nil || !strings.HasPrefix(err.Error(), "model: ") {
			t.Errorf("second SetRig: %v, want an error", err)
		}
	}
	// The demo rig is 2:1; a 10000×20 image is not.
	long := image.NewGray(image.Rect(0, 0, 10000, 20))
	got, err := plain.Estimate(ctx, long)
	if err != nil {
		t.Fatal(err)
	}
	err = got.SetRig(rig)
	if err == nil || !strings.Contains(err.Error(), "aspect ratio") || got.Depth != nil || got.Rig != nil {
		t.Errorf("10000x20 with the 2:1 demo rig: %v, depth %v", err, got.Depth != nil)
	}
	if _, err := rigged.Estimate(ctx, long); err == nil || !strings.Contains(err.Error(), "aspect ratio") {
		t.Errorf("rigged Estimator on 10000x20: %v, want the aspect-ratio error", err)
	}
}
