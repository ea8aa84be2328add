package depth

import (
	"bytes"
	"flag"
	"fmt"
	"image"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
)

// motorcycleRig is the Middlebury 2014 Motorcycle calibration for the
// quarter-size images shipped with scikit-image, copied from the docstring of
// skimage.data.stereo_motorcycle in Debian python3-skimage 0.19.3
// (/usr/lib/python3/dist-packages/skimage/data/_fetchers.py, lines 1076-1080):
// focal length 994.978 px, principal point x 311.193 px, y 254.877 px,
// principal point dx 31.086 px (our DeltaCx), baseline 193.001 mm; the returned images are
// 741 × 500. Fy = Fx is an assumption (the docstring gives one focal length);
// the depth range is ours.
func motorcycleRig() *Rig {
	return &Rig{
		Width: 741, Height: 500,
		Baseline: 0.193001, DeltaCx: 31.086,
		Fx: 994.978, Fy: 994.978, Cx: 311.193, Cy: 254.877,
		MinDepth: 0.5, MaxDepth: 10,
	}
}

func TestRigRoundTrip(t *testing.T) {
	rig := motorcycleRig()
	var buf bytes.Buffer
	if err := rig.Write(&buf); err != nil {
		t.Fatal(err)
	}
	got, err := ReadRig(&buf)
	if err != nil {
		t.Fatal(err)
	}
	if *got != *rig {
		t.Errorf("round trip: got %+v, want %+v", *got, *rig)
	}
	path := filepath.Join(t.TempDir(), "rig.json")
	if err := SaveRig(path, rig); err != nil {
		t.Fatal(err)
	}
	got, err = LoadRig(path)
	if err != nil {
		t.Fatal(err)
	}
	if *got != *rig {
		t.Errorf("file round trip: got %+v, want %+v", *got, *rig)
	}
	entries, _ := os.ReadDir(filepath.Dir(path))
	if len(entries) != 1 {
		t.Errorf("SaveRig left %d files in the directory, want 1", len(entries))
	}
}

func TestReadRigErrors(t *testing.T) {
	var buf bytes.Buffer
	if err := motorcycleRig().Write(&buf); err != nil {
		t.Fatal(err)
	}
	good := buf.String()
	cases := []struct {
		name, json, want string
	}{
		{"zero baseline", strings.Replace(good, `"baseline_m": 0.193001`, `"baseline_m": 0`, 1), "baseline_m"},
		{"negative fx", strings.Replace(good, `"fx_px": 994.978`, `"fx_px": -994.978`, 1), "fx_px"},
		{"missing field", strings.Replace(good, `"delta_cx_px": 31.086,`, ``, 1), `"delta_cx_px"`},
		{"unknown field", strings.Replace(good, `"delta_cx_px"`, `"delta_x_px"`, 1), "delta_x_px"},
		{"absurd width", strings.Replace(good, `"width_px": 741`, `"width_px": 1000000000`, 1), "width_px"},
		{"zero height", strings.Replace(good, `"height_px": 500`, `"height_px": 0`, 1), "height_px"},
		{"wrong format", strings.Replace(good, RigFormat, "other", 1), "format"},
		{"future version", strings.Replace(good, `"version": 2`, `"version": 3`, 1), "version 3"},
		{"depth range", strings.Replace(good, `"max_depth_m": 10`, `"max_depth_m": 0.1`, 1), "max_depth_m"},
		{"negative min depth", strings.Replace(good, `"min_depth_m": 0.5`, `"min_depth_m": -0.5`, 1), "min_depth_m"},
		// Issue 12 item 8: a repeated key must not silently win.
		{"repeated key", strings.Replace(good, `"baseline_m": 0.193001,`, `"baseline_m": 0.12, "baseline_m": 0.5,`, 1), `repeats the field "baseline_m"`},
		{"repeated key, same value", strings.Replace(good, `"cy_px": 254.877,`, `"cy_px": 254.877, "cy_px": 254.877,`, 1), `"cy_px"`},
		{"cx outside the image", strings.Replace(good, `"cx_px": 311.193`, `"cx_px": 5000`, 1), "cx_px"},
		{"cx left of the image", strings.Replace(good, `"cx_px": 311.193`, `"cx_px": -0.6`, 1), "cx_px"},
		{"cy outside the image", strings.Replace(good, `"cy_px": 254.877`, `"cy_px": 500`, 1), "cy_px"},
		{"right principal point outside", strings.Replace(good, `"delta_cx_px": 31.086`, `"delta_cx_px": 430`, 1), "delta_cx_px"},
		{"fy NaN-like", strings.Replace(good, `"fy_px": 994.978`, `"fy_px": 0`, 1), "fy_px"},
		{"not JSON", "{", "JSON"},
		{"trailing data", good + "{}", "after"},
		{"empty", "", "JSON"},
	}
	for _, c := range cases {
		_, err := ReadRig(strings.NewReader(c.json))
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		if !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %q, want prefix \"depth: \" and %q", c.name, err, c.want)
		}
	}
}

// TestReadRigVersion1 checks that a version-1 file is refused with the exact
// edit that makes it version 2, and that making that edit gives the same rig.
func TestReadRigVersion1(t *testing.T) {
	const v1 = `{
  "format": "parallax-rig",
  "version": 1,
  "width_px": 741,
  "height_px": 500,
  "focal_px": 994.978,
  "baseline_m": 0.193001,
  "doffs_px": 31.086,
  "fx_px": 994.978,
  "fy_px": 994.978,
  "cx_px": 311.193,
  "cy_px": 254.877,
  "min_depth_m": 0.5,
  "max_depth_m": 10
}`
	_, err := ReadRig(strings.NewReader(v1))
	if err == nil {
		t.Fatal("version 1: no error")
	}
	for _, want := range []string{"depth: ", `"version": 2`, `rename "doffs_px" to "delta_cx_px"`, `delete "focal_px"`} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("version-1 error %q lacks %q", err, want)
		}
	}
	migrated := strings.NewReplacer(`"version": 1`, `"version": 2`, `"doffs_px"`, `"delta_cx_px"`, "  \"focal_px\": 994.978,\n", "").Replace(v1)
	rig, err := ReadRig(strings.NewReader(migrated))
	if err != nil {
		t.Fatalf("migrated as the error says: %v", err)
	}
	if *rig != *motorcycleRig() {
		t.Errorf("migrated rig %+v, want %+v", *rig, *motorcycleRig())
	}
}

func TestRigValidate(t *testing.T) {
	mutate := []struct {
		name, field string
		f           func(r *Rig)
	}{
		{"NaN baseline", "baseline_m", func(r *Rig) { r.Baseline = math.NaN() }},
		{"Inf fx", "fx_px", func(r *Rig) { r.Fx = math.Inf(1) }},
		{"zero fy", "fy_px", func(r *Rig) { r.Fy = 0 }},
		{"NaN cx", "cx_px", func(r *Rig) { r.Cx = math.NaN() }},
		{"cx at the far edge", "cx_px", func(r *Rig) { r.Cx = 740.6 }},
		{"NaN cy", "cy_px", func(r *Rig) { r.Cy = math.NaN() }},
		{"delta cx wider than image", "delta_cx_px", func(r *Rig) { r.DeltaCx = 800 }},
		{"delta cx moves the right point left of the image", "delta_cx_px", func(r *Rig) { r.DeltaCx = -312 }},
		{"negative min depth", "min_depth_m", func(r *Rig) { r.MinDepth = -1 }},
		{"infinite max depth", "max_depth_m", func(r *Rig) { r.MaxDepth = math.Inf(1) }},
		{"too many pixels", "width_px", func(r *Rig) { r.Width, r.Height = planar.MaxSide, planar.MaxSide }},
	}
	for _, m := range mutate {
		r := motorcycleRig()
		m.f(r)
		err := r.Validate()
		if err == nil || !strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), m.field) {
			t.Errorf("%s: Validate = %v, want a depth: error naming %s", m.name, err, m.field)
		}
	}
	// The edges themselves are inside: pixels cover [-½, W-½].
	edge := motorcycleRig()
	edge.Cx, edge.Cy, edge.DeltaCx = -0.5, 499.5, 741
	if err := edge.Validate(); err != nil {
		t.Errorf("principal points on the image's edges: %v", err)
	}
	if err := motorcycleRig().Validate(); err != nil {
		t.Errorf("valid rig: %v", err)
	}
	var nilRig *Rig
	if err := nilRig.Validate(); err == nil {
		t.Error("nil rig: no error")
	}
}

func TestRigScaled(t *testing.T) {
	rig := motorcycleRig()
	half, err := rig.Scaled(741*2, 1000)
	if err != nil {
		t.Fatal(err)
	}
	const tol = 1e-9
	near := func(name string, got, want float64) {
		t.Helper()
		if math.Abs(got-want) > tol*math.Max(1, math.Abs(want)) {
			t.Errorf("%s = %v, want %v", name, got, want)
		}
	}
	near("focal", half.Fx, 2*994.978)
	near("fx", half.Fx, 2*994.978)
	near("fy", half.Fy, 2*994.978)
	near("delta cx", half.DeltaCx, 2*31.086)
	// Pixel-area resampling: the centre of old pixel 0 (covering [-½, ½])
	// lands at new coordinate 0.5 when the image doubles.
	near("cx", half.Cx, 2*311.193+0.5)
	near("cy", half.Cy, 2*254.877+0.5)
	near("baseline", half.Baseline, rig.Baseline)
	// Scaling there and back is the identity.
	back, err := half.Scaled(741, 500)
	if err != nil {
		t.Fatal(err)
	}
	near("cx back", back.Cx, rig.Cx)
	near("delta cx back", back.DeltaCx, rig.DeltaCx)
	if _, err := rig.Scaled(0, 10); err == nil {
		t.Error("Scaled(0, 10): no error")
	}
}

// TestRigAspect checks the one aspect-ratio rule: Scaled accepts sizes within
// 1 % of the rig's aspect ratio and refuses others, naming both sizes;
// Stretched rescales to any size, each axis by its own factor.
func TestRigAspect(t *testing.T) {
	rig := motorcycleRig() // 741x500, aspect 1.482
	for _, c := range []struct {
		w, h int
		ok   bool
	}{
		{370, 250, true},   // halved and rounded: 0.14 % apart
		{741, 500, true},   // itself
		{1482, 1000, true}, // doubled
		{748, 500, true},   // 0.94 % wider
		{749, 500, false},  // 1.08 % wider
		{734, 500, true},   // 0.94 % narrower
		{733, 500, false},  // 1.08 % narrower
		{256, 128, false},  // the network's 2:1 input
		{500, 500, false},  // a square crop
	} {
		_, err := rig.Scaled(c.w, c.h)
		if (err == nil) != c.ok {
			t.Errorf("Scaled(%d, %d): error %v, want ok=%v", c.w, c.h, err, c.ok)
		}
		if err := rig.CheckAspect(c.w, c.h); (err == nil) != c.ok {
			t.Errorf("CheckAspect(%d, %d): %v, want ok=%v", c.w, c.h, err, c.ok)
		} else if err != nil && (!strings.HasPrefix(err.Error(), "depth: ") || !strings.Contains(err.Error(), "741x500") ||
			!strings.Contains(err.Error(), fmt.Sprintf("%dx%d", c.w, c.h))) {
			t.Errorf("CheckAspect(%d, %d): error %q does not name both sizes", c.w, c.h, err)
		}
	}
	s, err := rig.Stretched(256, 128)
	if err != nil {
		t.Fatal(err)
	}
	sx, sy := 256.0/741, 128.0/500
	if math.Abs(s.Fx-994.978*sx) > 1e-9 || math.Abs(s.Fy-994.978*sy) > 1e-9 || math.Abs(s.DeltaCx-31.086*sx) > 1e-9 {
		t.Errorf("Stretched(256, 128) = %+v: fx, fy, delta cx not scaled by %v, %v", *s, sx, sy)
	}
	// A stretched image keeps its depth: the same scene point has disparity
	// d·sx at the stretched width.
	z0, _ := rig.DepthFromPixels(48.9999)
	z1, _ := s.DepthFromPixels(48.9999 * sx)
	if math.Abs(z0-z1) > 1e-9*z0 {
		t.Errorf("depth after stretching %v m, before %v m", z1, z0)
	}
	if err := rig.CheckAspect(0, 5); err == nil {
		t.Error("CheckAspect(0, 5): no error")
	}
}

var updateRig = flag.Bool("update-rig", false, "rewrite testdata/depth/motorcycle_rig.json")

// TestRigFile checks the committed example rig file
// (testdata/depth/motorcycle_rig.json, the Motorcycle calibration; rewrite
// it with go test ./depth -run TestRigFile -update-rig).
func TestRigFile(t *testing.T) {
	const path = "../testdata/depth/motorcycle_rig.json"
	if *updateRig {
		if err := SaveRig(path, motorcycleRig()); err != nil {
			t.Fatal(err)
		}
	}
	rig, err := LoadRig(path)
	if err != nil {
		t.Fatal(err)
	}
	if *rig != *motorcycleRig() {
		t.Errorf("%s holds %+v, want %+v", path, *rig, *motorcycleRig())
	}
}

func TestRigCropped(t *testing.T) {
	rig := motorcycleRig()
	c, err := rig.Cropped(image.Rect(10, 20, 710, 420))
	if err != nil {
		t.Fatal(err)
	}
	want := *rig
	want.Width, want.Height = 700, 400
	want.Cx, want.Cy = 311.193-10, 254.877-20
	if *c != want {
		t.Errorf("Cropped = %+v, want %+v", *c, want)
	}
	for _, r := range []image.Rectangle{image.Rect(0, 0, 742, 500), image.Rect(5, 5, 5, 9), image.Rect(-1, 0, 10, 10)} {
		if _, err := rig.Cropped(r); err == nil {
			t.Errorf("Cropped(%v): no error", r)
		}
	}
}
