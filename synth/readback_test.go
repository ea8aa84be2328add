package synth_test

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/synth"
)

// TestDatasetReadsFixtures opens the committed fixtures with package
// dataset, which must find every pair, the rig and every ground-truth kind
// synth writes.
func TestDatasetReadsFixtures(t *testing.T) {
	for _, st := range []synth.Style{synth.Greenhouse, synth.Storage} { // the committed fixtures
		dir := filepath.Join("..", "testdata", "synth", st.String())
		ds, err := dataset.Open(dir)
		if err != nil {
			t.Fatalf("%s: %v", st, err)
		}
		want, _ := st.Rig(synth.DefaultWidth, synth.DefaultHeight)
		if len(ds.Pairs) != 3 || ds.Rig == nil || *ds.Rig != *want {
			t.Errorf("%s: dataset.Open found %d pairs and rig %+v, want 3 and %+v", st, len(ds.Pairs), ds.Rig, want)
		}
		got := fmt.Sprint(ds.Truth)
		for _, k := range []string{"disp_left", "disp_right", "depth_left", "occ_left", "occ_right"} {
			if !strings.Contains(got, k) {
				t.Errorf("%s: truth kinds %q lack %s", st, got, k)
			}
		}
	}
}
