package synth

import (
	"bytes"
	"flag"
	"image"
	"image/png"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
)

var update = flag.Bool("update", false, "rewrite testdata/synth from the current renderer")

// Committed fixtures: testdata/synth/STYLE holds goldenPairs pairs of
// goldenSeed at the default size (see testdata/synth/README.md), for the
// goldenStyles.
const (
	goldenSeed  = 1
	goldenPairs = 3
)

var goldenStyles = []Style{Greenhouse, Storage}

// readTree returns every regular file under dir by slash-separated
// relative path.
func readTree(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	out := map[string][]byte{}
	err := filepath.WalkDir(dir, func(path string, d fs.DirEntry, err error) error {
		if err != nil || d.IsDir() {
			return err
		}
		rel, _ := filepath.Rel(dir, path)
		b, err := os.ReadFile(path)
		out[filepath.ToSlash(rel)] = b
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	return out
}

func keys(m map[string][]byte) []string {
	var k []string
	for s := range m {
		k = append(k, s)
	}
	sort.Strings(k)
	return k
}

// TestDatasetLayout writes a tiny dataset and reads every file back with
// the depth package's readers and image/png: the layout of the package
// documentation, disparities in pixels, depth in metres, occlusion 255.
func TestDatasetLayout(t *testing.T) {
	dir := t.TempDir()
	opt := &Options{Width: 64, Height: 32}
	if err := WriteDataset(dir, Storage, 5, 2, opt); err != nil {
		t.Fatal(err)
	}
	files := readTree(t, dir)
	var want []string
	for _, name := range []string{"000000", "000001"} {
		want = append(want,
			"left/"+name+".png", "right/"+name+".png",
			"truth/disp_left/"+name+".pfm", "truth/disp_right/"+name+".pfm", "truth/depth_left/"+name+".pfm",
			"truth/occ_left/"+name+".png", "truth/occ_right/"+name+".png")
	}
	want = append(want, "rig.json")
	sort.Strings(want)
	if got := keys(files); strings.Join(got, " ") != strings.Join(want, " ") {
		t.Fatalf("files:\n%v\nwant:\n%v", got, want)
	}
	rig, err := depth.LoadRig(filepath.Join(dir, dataset.RigFile))
	if err != nil {
		t.Fatal(err)
	}
	if wantRig, _ := Storage.Rig(64, 32); *rig != *wantRig {
		t.Errorf("rig.json holds %+v, want %+v", rig, wantRig)
	}
	p, err := Generate(Storage, 5, 1, opt)
	if err != nil {
		t.Fatal(err)
	}
	readPFM := func(rel string) []float32 {
		pix, w, h, c, err := depth.ReadPFM(bytes.NewReader(files[rel]))
		if err != nil || w != 64 || h != 32 || c != 1 {
			t.Fatalf("%s: %dx%dx%d, %v", rel, w, h, c, err)
		}
		return pix
	}
	dl := readPFM("truth/disp_left/000001.pfm")
	dr := readPFM("truth/disp_right/000001.pfm")
	z := readPFM("truth/depth_left/000001.pfm")
	for i := range dl {
		if math.Abs(float64(dl[i])-float64(p.DispLeft.Pix[i])*64) > 1e-6*float64(dl[i]) ||
			math.Abs(float64(dr[i])-float64(p.DispRight.Pix[i])*64) > 1e-6*float64(dr[i]) {
			t.Fatalf("pixel %d: file disparities %v, %v px, in memory %v, %v of the width", i, dl[i], dr[i], p.DispLeft.Pix[i], p.DispRight.Pix[i])
		}
		if z[i] != p.DepthLeft.Pix[i] {
			t.Fatalf("pixel %d: file depth %v, in memory %v", i, z[i], p.DepthLeft.Pix[i])
		}
		// Disparity in pixels is f·B/Z (Δcx 0).
		if want := rig.Fx * rig.Baseline / float64(z[i]); math.Abs(float64(dl[i])-want) > 1e-5*want {
			t.Fatalf("pixel %d: disparity %v px, f·B/Z = %v", i, dl[i], want)
		}
	}
	decode := func(rel string) image.Image {
		img, err := png.Decode(bytes.NewReader(files[rel]))
		if err != nil {
			t.Fatalf("%s: %v", rel, err)
		}
		return img
	}
	for _, c := range []struct {
		rel string
		vis []float32
	}{{"truth/occ_left/000001.png", p.VisibleLeft.Pix}, {"truth/occ_right/000001.png", p.VisibleRight.Pix}} {
		g, ok := decode(c.rel).(*image.Gray)
		if !ok {
			t.Fatalf("%s is not 8-bit gray", c.rel)
		}
		hidden := 0
		for i, v := range c.vis {
			want := uint8(0)
			if v == 0 {
				want, hidden = 255, hidden+1
			}
			if g.Pix[i] != want {
				t.Fatalf("%s pixel %d is %d, want %d", c.rel, i, g.Pix[i], want)
			}
		}
		if hidden == 0 {
			t.Errorf("%s: no pixel is hidden; the rig's border strip alone should be", c.rel)
		}
	}
	left := decode("left/000001.png")
	if _, ok := left.(*image.RGBA); !ok {
		t.Errorf("left image decodes as %T, want 8-bit RGB (image.RGBA)", left)
	}
	want8 := p.Left.ToNRGBA(0)
	for y := 0; y < 32; y++ {
		for x := 0; x < 64; x++ {
			r, g, b, _ := left.At(x, y).RGBA()
			o := want8.PixOffset(x, y)
			if uint8(r>>8) != want8.Pix[o] || uint8(g>>8) != want8.Pix[o+1] || uint8(b>>8) != want8.Pix[o+2] {
				t.Fatalf("left PNG pixel (%d, %d) differs from the rendered image", x, y)
			}
		}
	}
}

// TestDeterminism: two runs with one seed give identical bytes in every
// file, with one worker or several; another seed gives other images.
func TestDeterminism(t *testing.T) {
	opt := func(workers int) *Options { return &Options{Width: 96, Height: 48, Workers: workers} }
	for _, st := range Styles {
		a, b, c := t.TempDir(), t.TempDir(), t.TempDir()
		if err := WriteDataset(a, st, 42, 3, opt(1)); err != nil {
			t.Fatal(err)
		}
		if err := WriteDataset(b, st, 42, 3, opt(3)); err != nil {
			t.Fatal(err)
		}
		if err := WriteDataset(c, st, 43, 3, opt(2)); err != nil {
			t.Fatal(err)
		}
		fa, fb, fc := readTree(t, a), readTree(t, b), readTree(t, c)
		want := 22 // 3 pairs of 7 files and rig.json
		if v, _ := VaryDefault.resolve(st); v == VaryAll {
			want = 24 // 3 pairs of 7 files and a rig each
		}
		if len(fa) != want || len(fb) != len(fa) {
			t.Fatalf("%s: %d and %d files, want %d", st, len(fa), len(fb), want)
		}
		for name, data := range fa {
			if !bytes.Equal(data, fb[name]) {
				t.Errorf("%s: %s differs between two runs with seed 42", st, name)
			}
		}
		for _, name := range []string{"left/000000.png", "right/000002.png", "truth/disp_left/000001.pfm"} {
			if bytes.Equal(fa[name], fc[name]) {
				t.Errorf("%s: %s is the same for seeds 42 and 43", st, name)
			}
		}
		// Pairs of one run differ from each other.
		if bytes.Equal(fa["left/000000.png"], fa["left/000001.png"]) {
			t.Errorf("%s: pairs 0 and 1 are identical", st)
		}
	}
}

// TestGolden regenerates the committed fixtures in testdata/synth and
// compares them: rig.json and the PFM files byte for byte, the PNG files
// pixel for pixel (so a change in the PNG encoder's compression does not
// matter). A failure on another architecture would show floating-point
// contraction (see the package documentation). go test -run Golden
// -update rewrites the fixtures.
func TestGolden(t *testing.T) {
	for _, st := range goldenStyles {
		golden := filepath.Join("..", "testdata", "synth", st.String())
		if *update {
			if err := os.RemoveAll(golden); err != nil {
				t.Fatal(err)
			}
			if err := WriteDataset(golden, st, goldenSeed, goldenPairs, nil); err != nil {
				t.Fatal(err)
			}
			continue
		}
		dir := t.TempDir()
		if err := WriteDataset(dir, st, goldenSeed, goldenPairs, nil); err != nil {
			t.Fatal(err)
		}
		got, want := readTree(t, dir), readTree(t, golden)
		if strings.Join(keys(got), " ") != strings.Join(keys(want), " ") {
			t.Fatalf("%s: files %v, fixtures %v", st, keys(got), keys(want))
		}
		for name, w := range want {
			g := got[name]
			if strings.HasSuffix(name, ".png") {
				gi, err1 := png.Decode(bytes.NewReader(g))
				wi, err2 := png.Decode(bytes.NewReader(w))
				if err1 != nil || err2 != nil {
					t.Fatalf("%s: decoding %s: %v, %v", st, name, err1, err2)
				}
				if !samePixels(gi, wi) {
					t.Errorf("%s: %s differs from the fixture", st, name)
				}
				continue
			}
			if !bytes.Equal(g, w) {
				t.Errorf("%s: %s differs from the fixture", st, name)
			}
		}
	}
}

func samePixels(a, b image.Image) bool {
	if a.Bounds() != b.Bounds() {
		return false
	}
	r := a.Bounds()
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			if a.At(x, y) != b.At(x, y) {
				return false
			}
		}
	}
	return true
}

// TestGenerateIndependent: a pair does not depend on what else is made.
func TestGenerateIndependent(t *testing.T) {
	opt := &Options{Width: 48, Height: 24}
	a, err := Generate(Greenhouse, 9, 5, opt)
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < 5; i++ {
		if _, err := Generate(Greenhouse, 9, i, opt); err != nil {
			t.Fatal(err)
		}
	}
	b, _ := Generate(Greenhouse, 9, 5, opt)
	if !bytes.Equal(f32bytes(a.Left.Pix), f32bytes(b.Left.Pix)) || !bytes.Equal(f32bytes(a.DispRight.Pix), f32bytes(b.DispRight.Pix)) {
		t.Error("pair 5 changed after other pairs were generated")
	}
	s, _ := Generate(Storage, 9, 5, opt)
	if bytes.Equal(f32bytes(a.Left.Pix), f32bytes(s.Left.Pix)) {
		t.Error("greenhouse and storage pair 5 are identical")
	}
}

func f32bytes(v []float32) []byte {
	var buf bytes.Buffer
	for _, x := range v {
		b := math.Float32bits(x)
		buf.Write([]byte{byte(b), byte(b >> 8), byte(b >> 16), byte(b >> 24)})
	}
	return buf.Bytes()
}

// TestErrors: bad arguments give errors that start with "synth: ".
func TestErrors(t *testing.T) {
	file := filepath.Join(t.TempDir(), "file")
	if err := os.WriteFile(file, []byte("x"), 0o644); err != nil {
		t.Fatal(err)
	}
	_, errStyle := ParseStyle("garden")
	_, errIndex := Generate(Greenhouse, 1, -1, nil)
	_, errSamples := Generate(Greenhouse, 1, 0, &Options{Samples: MaxSamples + 1})
	_, errSize := Generate(Greenhouse, 1, 0, &Options{Width: 1, Height: 4})
	_, errHuge := Generate(Storage, 1, 0, &Options{Width: 1 << 20, Height: 1 << 20})
	_, errUnknown := Generate(Style(7), 1, 0, nil)
	_, errRig := Style(9).Rig(64, 32)
	errCount := WriteDataset(t.TempDir(), Storage, 1, -2, nil)
	errWorkers := WriteDataset(t.TempDir(), Storage, 1, 1, &Options{Workers: -1})
	errDir := WriteDataset(filepath.Join(file, "sub"), Storage, 1, 1, &Options{Width: 16, Height: 8})
	mixed := t.TempDir()
	if err := WriteDataset(mixed, Storage, 1, 1, &Options{Width: 16, Height: 8}); err != nil {
		t.Fatal(err)
	}
	errMixStyle := WriteDataset(mixed, Greenhouse, 1, 1, &Options{Width: 16, Height: 8})
	errMixSize := WriteDataset(mixed, Storage, 1, 1, &Options{Width: 32, Height: 8})
	if err := WriteDataset(mixed, Storage, 2, 2, &Options{Width: 16, Height: 8}); err != nil {
		t.Errorf("rewriting a dataset of the same rig: %v", err)
	}
	if err := os.WriteFile(filepath.Join(mixed, dataset.RigFile), []byte("{"), 0o644); err != nil {
		t.Fatal(err)
	}
	errBadRig := WriteDataset(mixed, Storage, 1, 1, &Options{Width: 16, Height: 8})
	errNil := (*Pair)(nil).Save(t.TempDir(), "a")
	p, _ := Generate(Storage, 1, 0, &Options{Width: 16, Height: 8})
	errName := p.Save(t.TempDir(), "../escape")
	bad := *p
	bad.DispLeft = nil
	errShape := bad.Save(t.TempDir(), "x")
	for name, err := range map[string]error{
		"style": errStyle, "index": errIndex, "samples": errSamples, "size": errSize, "huge": errHuge,
		"unknown style": errUnknown, "rig of unknown style": errRig, "count": errCount, "workers": errWorkers,
		"dir is a file": errDir, "nil pair": errNil,
		"other style in dir": errMixStyle, "other size in dir": errMixSize, "corrupt rig in dir": errBadRig, "name": errName, "missing map": errShape,
	} {
		if err == nil {
			t.Errorf("%s: no error", name)
		} else if !strings.HasPrefix(err.Error(), "synth: ") {
			t.Errorf("%s: error %q does not start with \"synth: \"", name, err)
		}
	}
	if s, err := ParseStyle("Storage"); err != nil || s != Storage {
		t.Errorf("ParseStyle(\"Storage\") = %v, %v", s, err)
	}
}
