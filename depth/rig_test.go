package depth

import (
	"bytes"
	"flag"
	"image"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// motorcycleRig is the Middlebury 2014 Motorcycle calibration for the
// quarter-size images shipped with scikit-image, copied from the docstring of
// skimage.data.stereo_motorcycle in Debian python3-skimage 0.19.3
// (/usr/lib/python3/dist-packages/skimage/data/_fetchers.py, lines 1076-1080):
// focal length 994.978 px, principal point x 311.193 px, y 254.877 px,
// principal point dx 31.086 px, baseline 193.001 mm; the returned images are
// 741 × 500. Fy = Fx is an assumption (the docstring gives one focal length);
// the depth range is ours.
func motorcycleRig() *Rig {
	return &Rig{
		Width: 741, Height: 500,
		Focal: 994.978, Baseline: 0.193001, Doffs: 31.086,
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
		{"zero baseline", strings.Replace(good, `"baseline_m": 0.193001`, `"baseline_m": 0`, 1), "baseline"},
		{"negative focal", strings.Replace(good, `"focal_px": 994.978`, `"focal_px": -994.978`, 1), "focal"},
		{"missing field", strings.Replace(good, `"doffs_px": 31.086,`, ``, 1), `"doffs_px"`},
		{"unknown field", strings.Replace(good, `"doffs_px"`, `"dofs_px"`, 1), "dofs_px"},
		{"absurd width", strings.Replace(good, `"width_px": 741`, `"width_px": 1000000000`, 1), "size"},
		{"zero height", strings.Replace(good, `"height_px": 500`, `"height_px": 0`, 1), "size"},
		{"wrong format", strings.Replace(good, RigFormat, "other", 1), "format"},
		{"future version", strings.Replace(good, `"version": 1`, `"version": 2`, 1), "version"},
		{"focal vs fx", strings.Replace(good, `"fx_px": 994.978`, `"fx_px": 990`, 1), "fx"},
		{"depth range", strings.Replace(good, `"max_depth_m": 10`, `"max_depth_m": 0.1`, 1), "depth range"},
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

func TestRigValidate(t *testing.T) {
	mutate := []struct {
		name string
		f    func(r *Rig)
	}{
		{"NaN baseline", func(r *Rig) { r.Baseline = math.NaN() }},
		{"Inf focal", func(r *Rig) { r.Focal, r.Fx = math.Inf(1), math.Inf(1) }},
		{"zero fy", func(r *Rig) { r.Fy = 0 }},
		{"NaN cx", func(r *Rig) { r.Cx = math.NaN() }},
		{"doffs wider than image", func(r *Rig) { r.Doffs = 800 }},
		{"negative min depth", func(r *Rig) { r.MinDepth = -1 }},
		{"infinite max depth", func(r *Rig) { r.MaxDepth = math.Inf(1) }},
		{"too many pixels", func(r *Rig) { r.Width, r.Height = MaxSide, MaxSide }},
	}
	for _, m := range mutate {
		r := motorcycleRig()
		m.f(r)
		if err := r.Validate(); err == nil || !strings.HasPrefix(err.Error(), "depth: ") {
			t.Errorf("%s: Validate = %v, want a depth: error", m.name, err)
		}
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
	near("focal", half.Focal, 2*994.978)
	near("fx", half.Fx, 2*994.978)
	near("fy", half.Fy, 2*994.978)
	near("doffs", half.Doffs, 2*31.086)
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
	near("doffs back", back.Doffs, rig.Doffs)
	if _, err := rig.Scaled(0, 10); err == nil {
		t.Error("Scaled(0, 10): no error")
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
