package main

import (
	"bytes"
	"context"
	"image"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/model"
)

// TestDemoRun runs the command's default path (the demo image) into a
// temporary folder and checks the files against each other: the 16-bit PNG,
// decoded by the standard library's image/png, holds round(1000·z) of the
// PFM depth; the PLY has one point per valid pixel; the summary carries the
// caution and the weights' status.
func TestDemoRun(t *testing.T) {
	dir := t.TempDir()
	var stdout, stderr bytes.Buffer
	if err := run(context.Background(), []string{"-out", dir, "-pfm", "-ply"}, &stdout, &stderr); err != nil {
		t.Fatal(err)
	}
	base := filepath.Join(dir, "greenhouse_000000")
	img := testutil.PNG(t, base+".depth-mm.png")
	g, ok := img.(*image.Gray16)
	if !ok {
		t.Fatalf("depth PNG decodes as %T, want *image.Gray16", img)
	}
	z, w, h, _, err := depth.LoadPFM(base + ".depth.pfm")
	if err != nil {
		t.Fatal(err)
	}
	if w != g.Rect.Dx() || h != g.Rect.Dy() {
		t.Fatalf("PFM %dx%d, PNG %v", w, h, g.Rect)
	}
	valid := 0
	for y := range h {
		for x := range w {
			mm := g.Gray16At(x, y).Y
			// PNG16 holds 1 mm … 65.535 m; a valid depth outside that range
			// is stored as 0 (depth.WritePNG16's documented rule).
			want := math.Round(float64(z[y*w+x]) * 1000)
			if want < 1 || want > 65535 {
				want = 0
			}
			if z[y*w+x] > 0 && float64(mm) != want {
				t.Fatalf("(%d, %d): PNG %d mm, PFM %v m", x, y, mm, z[y*w+x])
			}
			if z[y*w+x] > 0 {
				valid++
			}
		}
	}
	pc, err := depth.LoadPLY(base + ".points.ply")
	if err != nil {
		t.Fatal(err)
	}
	if len(pc.Points) != valid || valid == 0 {
		t.Errorf("PLY has %d points, %d valid pixels", len(pc.Points), valid)
	}
	sum, err := os.ReadFile(base + ".summary.txt")
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"not a safety-rated sensor", "median depth", "256 x 128"} {
		if !strings.Contains(string(sum), want) {
			t.Errorf("summary lacks %q:\n%s", want, sum)
		}
	}
	def, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	if st := def.Provenance[model.ProvenanceStatus]; st == "" || !strings.Contains(string(sum), "("+st+")") {
		t.Errorf("summary lacks the weights' status %q:\n%s", st, sum)
	}
	if _, err := os.Stat(base + ".depth-colour.png"); err != nil {
		t.Error(err)
	}
	if err := run(context.Background(), []string{"-out", dir, filepath.Join(dir, "missing.png")}, &stdout, &stderr); err == nil || !strings.HasPrefix(err.Error(), "estimate: ") {
		t.Errorf("missing input: %v", err)
	}
}

// A rig is rescaled to an image of its aspect ratio (the Motorcycle pair of
// testdata/motorcycle, 370×250, with its 741×500 rig) and refused, naming
// the rig file, for another one (the 256×128 demo image).
func TestRigAspect(t *testing.T) {
	rig := filepath.Join("..", "..", "testdata", "depth", "motorcycle_rig.json")
	var stdout, stderr bytes.Buffer
	err := run(context.Background(), []string{"-out", t.TempDir(), "-rig", rig, "-quiet"}, &stdout, &stderr)
	if err == nil || !strings.HasPrefix(err.Error(), "estimate: ") || !strings.Contains(err.Error(), rig) || !strings.Contains(err.Error(), "aspect ratio") {
		t.Errorf("demo image with a 741x500 rig: %v, want an aspect-ratio error naming %s", err, rig)
	}
	left := filepath.Join("..", "..", "testdata", "motorcycle", "left.png")
	if err := run(context.Background(), []string{"-out", t.TempDir(), "-rig", rig, "-quiet", left}, &stdout, &stderr); err != nil {
		t.Errorf("Motorcycle image with its rig: %v", err)
	}
}

// A PNG whose header claims 60000×60000 pixels is refused from its header,
// before image.Decode would try to allocate 14 GB.
func TestHugeImageHeader(t *testing.T) {
	path := filepath.Join("..", "..", "testdata", "infer", "huge_header.png") // made by make_huge_png.py there
	var stdout, stderr bytes.Buffer
	err := run(context.Background(), []string{"-out", t.TempDir(), "-quiet", path}, &stdout, &stderr)
	if err == nil || !strings.HasPrefix(err.Error(), "estimate: ") || !strings.Contains(err.Error(), "60000x60000 is too large") || !strings.Contains(err.Error(), path) {
		t.Errorf("huge header: %v", err)
	}
}

// TestFolderProgressInFile: a folder of images with stderr going to a file
// gets plain progress lines, no carriage return, and the bad flag and
// -help paths behave (help is no error, an unknown flag is one).
func TestFolderProgressInFile(t *testing.T) {
	in := t.TempDir()
	left := filepath.Join("..", "..", "testdata", "motorcycle", "left.png")
	b, err := os.ReadFile(left)
	if err != nil {
		t.Fatal(err)
	}
	for _, n := range []string{"a.png", "b.png"} {
		if err := os.WriteFile(filepath.Join(in, n), b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	logf, err := os.Create(filepath.Join(t.TempDir(), "log.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer logf.Close()
	var stdout bytes.Buffer
	if err := run(context.Background(), []string{"-out", t.TempDir(), in}, &stdout, logf); err != nil {
		t.Fatal(err)
	}
	log, _ := os.ReadFile(logf.Name())
	if bytes.ContainsRune(log, '\r') || !bytes.Contains(log, []byte("2/2 images 100%")) {
		t.Errorf("progress in a file:\n%q", log)
	}
	if !strings.Contains(stdout.String(), "2 images estimated") {
		t.Errorf("stdout %q", stdout.String())
	}
	if err := run(context.Background(), []string{"-help"}, &stdout, &bytes.Buffer{}); err != nil {
		t.Errorf("-help: %v", err)
	}
	if err := run(context.Background(), []string{"-no-such-flag"}, &stdout, &bytes.Buffer{}); err == nil || !strings.HasPrefix(err.Error(), "estimate: ") {
		t.Errorf("unknown flag: %v", err)
	}
}

// -min-confidence replaces the library's threshold: 0 keeps every
// confidence, so at least as many pixels have depth as with the default
// (0.2), and 0.9 keeps fewer; the three differ on the demo image.
func TestMinConfidence(t *testing.T) {
	count := func(minConf string) int {
		dir := t.TempDir()
		var stdout, stderr bytes.Buffer
		if err := run(context.Background(), []string{"-quiet", "-pfm", "-min-confidence", minConf, "-out", dir}, &stdout, &stderr); err != nil {
			t.Fatal(err)
		}
		z, _, _, _, err := depth.LoadPFM(filepath.Join(dir, "greenhouse_000000.depth.pfm"))
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, v := range z {
			if v == v { // NaN = no depth
				n++
			}
		}
		return n
	}
	off, def, strict := count("0"), count("0.2"), count("0.9")
	t.Logf("pixels with depth: -min-confidence 0: %d, 0.2: %d, 0.9: %d", off, def, strict)
	if !(off > def && def > strict) {
		t.Errorf("pixels with depth %d (0), %d (0.2), %d (0.9): want strictly fewer as the threshold rises", off, def, strict)
	}
}

// TestPLYGrid: -ply-grid writes the PLY (no -ply needed) and the cloud keeps the image grid, one point a
// pixel in row order, NaN exactly where the PFM depth has none, and the
// valid points are those of the plain cloud in the same order.
func TestPLYGrid(t *testing.T) {
	plain, grid := t.TempDir(), t.TempDir()
	for _, c := range []struct {
		dir  string
		args []string
	}{{plain, []string{"-ply"}}, {grid, []string{"-pfm", "-ply-grid"}}} {
		var stdout, stderr bytes.Buffer
		if err := run(context.Background(), append([]string{"-out", c.dir, "-quiet"}, c.args...), &stdout, &stderr); err != nil {
			t.Fatal(err)
		}
	}
	z, w, h, _, err := depth.LoadPFM(filepath.Join(grid, "greenhouse_000000.depth.pfm"))
	if err != nil {
		t.Fatal(err)
	}
	pg, err := depth.LoadPLY(filepath.Join(grid, "greenhouse_000000.points.ply"))
	if err != nil {
		t.Fatal(err)
	}
	pp, err := depth.LoadPLY(filepath.Join(plain, "greenhouse_000000.points.ply"))
	if err != nil {
		t.Fatal(err)
	}
	if pg.Width != w || pg.Height != h || len(pg.Points) != w*h {
		t.Fatalf("grid cloud %dx%d with %d points, the image is %dx%d", pg.Width, pg.Height, len(pg.Points), w, h)
	}
	var kept []depth.Point
	for i, p := range pg.Points {
		hasDepth := z[i] > 0
		if isNaN := math.IsNaN(float64(p.Z)); isNaN == hasDepth {
			t.Fatalf("pixel %d: point %+v, PFM depth %v", i, p, z[i])
		}
		if hasDepth {
			if math.Abs(float64(p.Z-z[i])) > 1e-5*float64(z[i]) {
				t.Fatalf("pixel %d: point Z %v, PFM depth %v", i, p.Z, z[i])
			}
			kept = append(kept, p)
		}
	}
	if len(kept) == 0 || len(kept) == w*h {
		t.Fatalf("%d of %d pixels valid: the test needs both kinds", len(kept), w*h)
	}
	if !slices.Equal(kept, pp.Points) {
		t.Errorf("the grid cloud's valid points differ from the plain cloud's (%d and %d points)", len(kept), len(pp.Points))
	}
}
