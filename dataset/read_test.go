package dataset

import (
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
)

func TestFrames(t *testing.T) {
	var names []string
	for f, err := range Frames(filepath.Join("..", "testdata", "synth", "storage", "left")) {
		if err != nil {
			t.Fatal(err)
		}
		if f.Image.Bounds().Dx() != 256 {
			t.Errorf("%s: bounds %v", f.Name, f.Image.Bounds())
		}
		names = append(names, f.Name)
	}
	if len(names) != 3 || names[0] != "000000" || names[2] != "000002" {
		t.Errorf("names %v", names)
	}
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "bad.png"), []byte("not a png"), 0o644)
	for _, d := range []string{dir, filepath.Join(dir, "missing"), t.TempDir()} {
		n := 0
		for _, err := range Frames(d) {
			n++
			if err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
				t.Errorf("Frames(%s): %v", d, err)
			}
		}
		if n != 1 {
			t.Errorf("Frames(%s): %d results, want one error", d, n)
		}
	}
}

// ImageFiles keeps .png, .jpg and .jpeg in any case, in name order, and
// skips hidden files, folders and other extensions.
func TestImageFiles(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"b.PNG", "a.jpeg", "c.Jpg", ".hidden.png", "notes.txt", "d.png.bak"} {
		os.WriteFile(filepath.Join(dir, n), nil, 0o644)
	}
	os.Mkdir(filepath.Join(dir, "e.png"), 0o755)
	got, err := ImageFiles(dir)
	if err != nil {
		t.Fatal(err)
	}
	if want := []string{"a.jpeg", "b.PNG", "c.Jpg"}; !slices.Equal(got, want) {
		t.Errorf("ImageFiles: %q, want %q", got, want)
	}
	if names, err := ImageFiles(t.TempDir()); err != nil || len(names) != 0 {
		t.Errorf("empty folder: %q, %v", names, err)
	}
	if _, err := ImageFiles(filepath.Join(dir, "missing")); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") {
		t.Errorf("missing folder: %v", err)
	}
}

// LoadImage, Frames and Open refuse an image whose header claims
// 60000×60000 pixels before decoding it.
func TestHugeHeader(t *testing.T) {
	huge := filepath.Join("..", "testdata", "infer", "huge_header.png") // made by make_huge_png.py there
	// Where int has 32 bits image/png refuses the header itself.
	tooLarge, hugeTooLarge := "too large", "60000x60000 is too large"
	if strconv.IntSize == 32 {
		tooLarge, hugeTooLarge = "dimension overflow", "dimension overflow"
	}
	if _, err := LoadImage(huge); err == nil || !strings.HasPrefix(err.Error(), "dataset: ") || !strings.Contains(err.Error(), hugeTooLarge) || !strings.Contains(err.Error(), huge) {
		t.Errorf("LoadImage: %v", err)
	}
	b, err := os.ReadFile(huge)
	if err != nil {
		t.Fatal(err)
	}
	dir := writeSet(t, fixture{w: 8, h: 4}, "a")
	os.WriteFile(filepath.Join(dir, "left", "a.png"), b, 0o644)
	for _, err := range Frames(filepath.Join(dir, "left")) {
		if err == nil || !strings.Contains(err.Error(), tooLarge) {
			t.Errorf("Frames: %v", err)
		}
	}
	_, err = Open(dir)
	wantErr(t, err, filepath.Join("left", "a.png"), tooLarge)
}
