package train

import (
	"image"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
)

// TestDatasetSourceRefusesSmallPairs: training refuses a pair smaller than
// the network's smallest input (model.MinSide), naming its size and the
// minimum, instead of training on it blown up (issue 12 item 9).
func TestDatasetSourceRefusesSmallPairs(t *testing.T) {
	dir := t.TempDir()
	for _, n := range []string{"big", "tiny"} {
		side := model.MinSide
		if n == "tiny" {
			side = 1
		}
		img := image.NewGray(image.Rect(0, 0, side, side))
		if err := dataset.WriteRecord(dir, &dataset.Record{Name: n, Left: img, Right: img}); err != nil {
			t.Fatal(err)
		}
	}
	ds, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	_, err = NewDatasetSource(ds, trainerConfig, 1, 1, nil)
	if err == nil || !strings.HasPrefix(err.Error(), "train: ") || !strings.Contains(err.Error(), `"tiny" is 1×1`) || !strings.Contains(err.Error(), "at least 64×64") || strings.Contains(err.Error(), "big") {
		t.Fatalf("a 1×1 pair: %v", err)
	}
	ds.Pairs = ds.Pairs[:1]
	if _, err := NewDatasetSource(ds, trainerConfig, 1, 1, nil); err != nil {
		t.Errorf("a %d×%d pair: %v", model.MinSide, model.MinSide, err)
	}
}
