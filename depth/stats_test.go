package depth

import (
	"image"
	"os"
	"path/filepath"
	"testing"
)

// TestStats: range, median (mean of the middle two for an even count) and
// counts over the valid pixels only, by hand.
func TestStats(t *testing.T) {
	d, err := NewDepth(image.Rect(0, 0, 3, 2))
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range []float32{4, 1, 3, 0, 2, 9} {
		if v > 0 {
			d.Set(i%3, i/3, v)
		}
	}
	d.SetInvalid(2, 1) // the 9 does not count
	s := d.Stats()
	want := MapStats{Valid: 4, Pixels: 6, Min: 1, Median: 2.5, Max: 4}
	if s != want {
		t.Fatalf("Stats %+v, want %+v", s, want)
	}
	if n := d.CountBelow(3); n != 2 {
		t.Errorf("CountBelow(3) = %d, want 2", n)
	}
	empty, _ := NewDepth(image.Rect(0, 0, 2, 2))
	if s := empty.Stats(); s != (MapStats{Pixels: 4}) {
		t.Errorf("empty map: %+v", s)
	}
}

// TestSaveFile: the file holds the data and no temporary file stays.
func TestSaveFile(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "a.txt")
	if err := SaveFile(p, []byte("one")); err != nil {
		t.Fatal(err)
	}
	if err := SaveFile(p, []byte("two")); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(p)
	ents, _ := os.ReadDir(dir)
	if err != nil || string(b) != "two" || len(ents) != 1 {
		t.Fatalf("%q %v, %d entries", b, err, len(ents))
	}
	if err := SaveFile(filepath.Join(dir, "no", "a.txt"), nil); err == nil {
		t.Error("write into a missing folder succeeded")
	}
}
