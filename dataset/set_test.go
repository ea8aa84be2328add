package dataset

import (
	"bytes"
	"image"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
)

// fixture describes a tiny data set written by writeSet.
type fixture struct {
	w, h  int
	truth bool // disparity of both views, left depth, left occlusion
	rig   bool
}

func testRig(w, h int) *depth.Rig {
	return &depth.Rig{Width: w, Height: h, Baseline: 0.1, Fx: 100, Fy: 100,
		Cx: float64(w-1) / 2, Cy: float64(h-1) / 2, MinDepth: 0.5, MaxDepth: 20}
}

// record returns a pair whose pixel (x, y) has grey level 10x+y+seed and,
// with truth, disparity x+1 px (invalid at (0, 0)), depth 2.5 m and the
// first column occluded.
func record(t *testing.T, name string, f fixture, seed int) *Record {
	t.Helper()
	r := image.Rect(0, 0, f.w, f.h)
	l, rt := image.NewNRGBA(r), image.NewNRGBA(r)
	for y := range f.h {
		for x := range f.w {
			v := uint8(10*x + y + seed)
			l.SetNRGBA(x, y, color.NRGBA{v, 255 - v, v / 2, 255})
			rt.SetNRGBA(x, y, color.NRGBA{v / 3, v, 7, 255})
		}
	}
	rec := &Record{Name: name, Left: l, Right: rt}
	if !f.truth {
		return rec
	}
	dl, _ := depth.NewDisparity(r)
	dr, _ := depth.NewDisparity(r)
	z, _ := depth.NewDepth(r)
	occ := image.NewGray(r)
	for y := range f.h {
		for x := range f.w {
			dl.Set(x, y, float32(x+1))
			dr.Set(x, y, float32(y)+0.5)
			z.Set(x, y, 2.5)
		}
		occ.SetGray(0, y, color.Gray{255})
	}
	dl.SetInvalid(0, 0)
	rec.DispLeft, rec.DispRight, rec.DepthLeft, rec.OccLeft = dl, dr, z, occ
	return rec
}

// writeSet writes the pairs names of fixture f into a new folder with
// Create (if f.rig) and WriteRecord.
func writeSet(t *testing.T, f fixture, names ...string) string {
	t.Helper()
	dir := t.TempDir()
	if f.rig {
		if err := Create(dir, testRig(f.w, f.h)); err != nil {
			t.Fatal(err)
		}
	}
	for i, n := range names {
		if err := WriteRecord(dir, record(t, n, f, i)); err != nil {
			t.Fatal(err)
		}
	}
	return dir
}

func savePNGFile(t *testing.T, path string, img image.Image) {
	t.Helper()
	var b bytes.Buffer
	if err := png.Encode(&b, img); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// wantErr is testutil.WantError for this package's errors; it stops the
// test when err is nil.
func wantErr(t *testing.T, err error, parts ...string) {
	t.Helper()
	if err == nil {
		t.Fatalf("no error, want one containing %q", parts)
	}
	testutil.WantError(t, "error", err, "dataset: ", parts...)
}

func TestOpen(t *testing.T) {
	dir := writeSet(t, fixture{w: 64, h: 32, truth: true, rig: true}, "b", "a", "c")
	os.WriteFile(filepath.Join(dir, "left", "notes.txt"), []byte("ignored"), 0o644)
	os.WriteFile(filepath.Join(dir, "left", ".hidden.png"), []byte("ignored"), 0o644)
	ds, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	if len(ds.Pairs) != 3 || ds.Pairs[0].Name != "a" || ds.Pairs[2].Name != "c" {
		t.Fatalf("pairs %+v", ds.Pairs)
	}
	if ds.Rig == nil || *ds.Rig != *testRig(64, 32) {
		t.Fatalf("rig %+v", ds.Rig)
	}
	if got := ds.Truth; len(got) != 4 || got[0] != DispLeft || got[1] != DispRight || got[2] != DepthLeft || got[3] != OccLeft {
		t.Fatalf("truth kinds %v", got)
	}
	if !ds.Has(DepthLeft) || ds.Has(OccRight) {
		t.Errorf("Has: depth %v, right occlusion %v", ds.Has(DepthLeft), ds.Has(OccRight))
	}
	if p := ds.Pairs[1]; p.Width != 64 || p.Height != 32 || filepath.Base(p.Truth[DepthLeft]) != "b.pfm" {
		t.Fatalf("pair %+v", p)
	}
}

func TestOpenReportsByName(t *testing.T) {
	f := fixture{w: 32, h: 16, truth: true}

	dir := writeSet(t, f, "a", "b", "c")
	os.Remove(filepath.Join(dir, "right", "b.png"))
	os.Remove(filepath.Join(dir, "left", "c.png"))
	_, err := Open(dir)
	wantErr(t, err, "2 unpaired", "left/b.png has no partner in right/", "right/c.png has no partner in left/")

	dir = writeSet(t, f, "a", "b")
	savePNGFile(t, filepath.Join(dir, "right", "b.png"), image.NewGray(image.Rect(0, 0, 30, 16)))
	_, err = Open(dir)
	wantErr(t, err, `pair "b": left/b.png is 32×16 but right/b.png is 30×16`)

	dir = writeSet(t, f, "a", "b")
	os.WriteFile(filepath.Join(dir, "left", "a.png"), []byte("not a png at all"), 0o644)
	_, err = Open(dir)
	wantErr(t, err, "left/a.png", "image: unknown format")

	dir = writeSet(t, f, "a", "b")
	os.Remove(filepath.Join(dir, "truth", "disp_right", "a.pfm"))
	os.WriteFile(filepath.Join(dir, "truth", "depth_left", "zzz.pfm"), nil, 0o644)
	_, err = Open(dir)
	wantErr(t, err, `pair "a" has no truth/disp_right/a.pfm`, "truth/depth_left/zzz.pfm belongs to no pair")

	dir = writeSet(t, f, "a")
	savePNGFile(t, filepath.Join(dir, "left", "a.jpg"), image.NewGray(image.Rect(0, 0, 32, 16)))
	_, err = Open(dir)
	wantErr(t, err, "left/a.png", "left/a.jpg", "have the same name")

	dir = writeSet(t, fixture{w: 32, h: 16, rig: true}, "a")
	rig := testRig(64, 16)
	if err := depth.SaveRig(filepath.Join(dir, RigFile), rig); err != nil {
		t.Fatal(err)
	}
	_, err = Open(dir)
	wantErr(t, err, "rig.json describes 64×16 images but left/a.png is 32×16")

	os.WriteFile(filepath.Join(dir, RigFile), []byte(`{"format": "parallax-rig"}`), 0o644)
	_, err = Open(dir)
	wantErr(t, err, "rig")

	_, err = Open(t.TempDir())
	wantErr(t, err, "left")
}

// TestWriteRead writes pairs with Create and WriteRecord and reads them back
// with Open and Read: the same pixels, truth values and invalid pixels.
func TestWriteRead(t *testing.T) {
	f := fixture{w: 12, h: 5, truth: true, rig: true}
	dir := writeSet(t, f, "p0", "p1")
	ds, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	got, err := ds.Read(1)
	if err != nil {
		t.Fatal(err)
	}
	want := record(t, "p1", f, 1)
	if got.Name != "p1" || got.DispRight == nil || got.OccRight != nil {
		t.Fatalf("record %+v", got)
	}
	for y := range f.h {
		for x := range f.w {
			for _, im := range []struct{ got, want image.Image }{{got.Left, want.Left}, {got.Right, want.Right}, {got.OccLeft, want.OccLeft}} {
				if a, b := color.NRGBAModel.Convert(im.got.At(x, y)), color.NRGBAModel.Convert(im.want.At(x, y)); a != b {
					t.Fatalf("(%d, %d): read %v, wrote %v", x, y, a, b)
				}
			}
			for _, m := range []struct{ got, want *depth.Map }{{&got.DispLeft.Map, &want.DispLeft.Map}, {&got.DispRight.Map, &want.DispRight.Map}, {&got.DepthLeft.Map, &want.DepthLeft.Map}} {
				a, okA := m.got.At(x, y)
				b, okB := m.want.At(x, y)
				if a != b || okA != okB {
					t.Fatalf("(%d, %d): read %v (valid %v), wrote %v (valid %v)", x, y, a, okA, b, okB)
				}
			}
		}
	}
	if _, ok := got.DispLeft.At(0, 0); ok {
		t.Error("the invalid pixel came back valid")
	}
	// A second Create with another rig is refused; with the same rig, the
	// pairs stay.
	if err := Create(dir, testRig(24, 10)); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") || !strings.Contains(err.Error(), "another rig") {
		t.Errorf("Create with another rig: %v", err)
	}
	if err := Create(dir, testRig(12, 5)); err != nil {
		t.Fatal(err)
	}
	if ds, err := Open(dir); err != nil || len(ds.Pairs) != 2 {
		t.Errorf("after Create with the same rig: %v", err)
	}
}

func TestWriteErrors(t *testing.T) {
	f := fixture{w: 8, h: 4, truth: true}
	dir := t.TempDir()
	small := record(t, "x", fixture{w: 4, h: 4, truth: true}, 0)
	for name, r := range map[string]*Record{
		"nil":         nil,
		"no right":    {Name: "a", Left: record(t, "a", f, 0).Left},
		"empty name":  record(t, "", f, 0),
		"escape":      record(t, "../up", f, 0),
		"hidden name": record(t, ".a", f, 0),
		"right size":  {Name: "a", Left: record(t, "a", f, 0).Left, Right: small.Right},
		"map size":    {Name: "a", Left: record(t, "a", f, 0).Left, Right: record(t, "a", f, 0).Right, DispLeft: small.DispLeft},
	} {
		if err := WriteRecord(dir, r); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
			t.Errorf("%s: %v", name, err)
		}
	}
	if err := Create(dir, nil); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
		t.Errorf("nil rig: %v", err)
	}
	bad := *testRig(8, 4)
	bad.Fx = -1
	if err := Create(dir, &bad); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
		t.Errorf("invalid rig: %v", err)
	}
}

// TestReadChangedFiles: files replaced after Open with another size, a
// truncated image or a map of several channels are errors naming them.
func TestReadChangedFiles(t *testing.T) {
	dir := writeSet(t, fixture{w: 8, h: 4, truth: true}, "a")
	ds, err := Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	right := filepath.Join(dir, "right", "a.png")
	savePNGFile(t, right, image.NewGray(image.Rect(0, 0, 9, 4)))
	_, err = ds.Read(0)
	wantErr(t, err, right, "9×4", "expected 8×4")

	savePNGFile(t, right, image.NewGray(image.Rect(0, 0, 8, 4)))
	disp := filepath.Join(dir, "truth", "disp_left", "a.pfm")
	if err := depth.SavePFM(disp, make([]float32, 3*8*4), 8, 4, 3); err != nil {
		t.Fatal(err)
	}
	_, err = ds.Read(0)
	wantErr(t, err, disp, "3 channels")

	if err := depth.SavePFM(disp, make([]float32, 8*5), 8, 5, 1); err != nil {
		t.Fatal(err)
	}
	_, err = ds.Read(0)
	wantErr(t, err, disp, "8×5")

	_, err = ds.Read(1)
	wantErr(t, err, "out of range")
}

// TestFromFiles makes a set of the committed Motorcycle pair (Middlebury
// 2014, from Debian python3-skimage 0.19.3; see testdata/motorcycle) and
// its rig, and reads it as Open would read the same files in a folder.
func TestFromFiles(t *testing.T) {
	m := filepath.Join("..", "testdata", "motorcycle")
	left, right, disp := filepath.Join(m, "left.png"), filepath.Join(m, "right.png"), filepath.Join(m, "disp_left.pfm")
	rigPath := filepath.Join("..", "testdata", "depth", "motorcycle_rig.json")
	ds, err := FromFiles(left, right, map[Kind]string{DispLeft: disp}, rigPath)
	if err != nil {
		t.Fatal(err)
	}
	full, err := depth.LoadRig(rigPath)
	if err != nil {
		t.Fatal(err)
	}
	wantRig, err := full.Scaled(370, 250)
	if err != nil {
		t.Fatal(err)
	}
	if ds.Dir != "" || len(ds.Pairs) != 1 || ds.Pairs[0].Name != "left" || ds.Pairs[0].Width != 370 || ds.Pairs[0].Height != 250 ||
		!ds.Has(DispLeft) || len(ds.Truth) != 1 || ds.Rig == nil || *ds.Rig != *wantRig {
		t.Fatalf("set %+v, rig %+v", ds, ds.Rig)
	}
	r, err := ds.Read(0)
	if err != nil {
		t.Fatal(err)
	}
	// The file's +Inf pixels are unknown (testdata/motorcycle/PROVENANCE.md).
	pix, _, _, _, err := depth.LoadPFM(disp)
	if err != nil {
		t.Fatal(err)
	}
	valid := 0
	for i, v := range pix {
		got, ok := r.DispLeft.At(i%370, i/370)
		if finite := v > 0 && v < float32(1e38); ok != finite || (ok && got != v) {
			t.Fatalf("pixel %d: file %v, read %v (valid %v)", i, v, got, ok)
		}
		if ok {
			valid++
		}
	}
	if valid == 0 || valid == len(pix) {
		t.Errorf("%d of %d pixels valid: the fixture has both kinds", valid, len(pix))
	}
	if ds, err := FromFiles(left, right, nil, ""); err != nil || ds.Rig != nil || len(ds.Truth) != 0 {
		t.Errorf("without truth and rig: %+v, %v", ds, err)
	}

	small := filepath.Join("..", "model", "demo", "greenhouse_left.png") // 256×128
	greenhouseRig := filepath.Join("..", "testdata", "synth", "greenhouse", "rig.json")
	for _, c := range []struct {
		name        string
		left, right string
		truth       map[Kind]string
		rig         string
		want        []string
	}{
		{"sizes differ", left, small, nil, "", []string{left, small, "370×250", "256×128"}},
		{"missing image", left, filepath.Join(m, "nope.png"), nil, "", []string{"nope.png"}},
		{"missing truth", left, right, map[Kind]string{DispLeft: filepath.Join(m, "nope.pfm")}, "", []string{"nope.pfm"}},
		{"unknown kind", left, right, map[Kind]string{"disp_center": disp}, "", []string{"disp_center"}},
		{"aspect ratio", left, right, nil, greenhouseRig, []string{left, greenhouseRig, "aspect ratio"}},
		{"bad rig", left, right, nil, disp, []string{disp}},
	} {
		_, err := FromFiles(c.left, c.right, c.truth, c.rig)
		testutil.WantError(t, c.name, err, "dataset: ", c.want...)
	}
	// A truth file that is not a PFM is found on reading, by its name.
	ds, err = FromFiles(left, right, map[Kind]string{DispLeft: right}, "")
	if err != nil {
		t.Fatal(err)
	}
	_, err = ds.Read(0)
	wantErr(t, err, right, "PFM")
}
