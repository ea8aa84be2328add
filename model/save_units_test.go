package model

import (
	"context"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
)

// TestSaveUnits saves the demo's estimate with every file, checks that
// the summary states a unit for each, that the 16-bit PNG carries the rig
// and that invalid pixels are NaN in the PFM and in the organised cloud.
func TestSaveUnits(t *testing.T) {
	img, _, e := demoEstimate(t)
	if e.Depth.Valid() == e.Depth.Rect.Dx()*e.Depth.Rect.Dy() {
		t.Fatal("every pixel is valid: the invalid checks below prove nothing")
	}
	base := filepath.Join(t.TempDir(), "demo")
	files, _, err := e.Save(base, img, &SaveOptions{PFM: true, PLY: true, OrganizedPLY: true})
	if err != nil {
		t.Fatal(err)
	}
	sum := e.Describe(EstimateInfo{Files: files})
	for _, f := range files {
		u := FileUnits(f)
		if u == "" || !strings.Contains(sum, f+"  ("+u+")") {
			t.Errorf("no unit for %s in the summary:\n%s", f, sum)
		}
	}
	z, info, err := depth.LoadPNG16Info(base + ".depth-mm.png")
	if err != nil {
		t.Fatal(err)
	}
	if info.Rig == nil || *info.Rig != *e.Rig || info.Unit != "mm" || z.Valid() != e.Depth.Valid() {
		t.Errorf("PNG16: info %+v, %d valid, want %d", info, z.Valid(), e.Depth.Valid())
	}
	pix, _, _, _, err := depth.LoadPFM(base + ".depth.pfm")
	if err != nil {
		t.Fatal(err)
	}
	pc, err := depth.LoadPLY(base + ".points.ply")
	if err != nil {
		t.Fatal(err)
	}
	for i, m := range e.Depth.Mask {
		if (m == 0) != math.IsNaN(float64(pix[i])) || (m == 0) != math.IsNaN(float64(pc.Points[i].Z)) {
			t.Fatalf("pixel %d: mask %d, PFM %v, PLY %v", i, m, pix[i], pc.Points[i].Z)
		}
	}
}

// TestSaveWithSummary: the summary file holds what Describe says (the
// network size the estimate ran at, the method or the weights, every note)
// and the caution, and lists itself among the files.
func TestSaveWithSummary(t *testing.T) {
	img, est, e := demoEstimate(t)
	base := filepath.Join(t.TempDir(), "demo")
	sum, err := e.SaveWithSummary(base, img, nil, EstimateInfo{Method: "by hand", Notes: []string{"first note", "second note"}})
	if err != nil {
		t.Fatal(err)
	}
	file, err := os.ReadFile(base + ".summary.txt")
	if err != nil || string(file) != sum {
		t.Fatalf("summary file %q (%v), returned %q", file, err, sum)
	}
	nw, nh, err := est.NetworkSize(img.Bounds().Dx(), img.Bounds().Dy())
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{fmt.Sprintf("(network input %d x %d)", nw, nh), "method       by hand\n", "note         first note\nnote         second note\n", "demo.summary.txt", Caution} {
		if !strings.Contains(sum, want) {
			t.Errorf("summary lacks %q:\n%s", want, sum)
		}
	}
	if strings.Contains(sum, "weights ") {
		t.Errorf("summary names weights it was not given:\n%s", sum)
	}
}

// demoEstimate returns the demo image, an Estimator of the default weights
// with the demo rig, and its estimate of the image.
func demoEstimate(t *testing.T) (image.Image, *Estimator, *Estimate) {
	t.Helper()
	img, rig := demoInputs(t)
	est, err := NewEstimator(nil, &EstimatorOptions{Rig: rig})
	if err != nil {
		t.Fatal(err)
	}
	e, err := est.Estimate(context.Background(), img)
	if err != nil {
		t.Fatal(err)
	}
	return img, est, e
}
