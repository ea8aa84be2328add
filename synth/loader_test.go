package synth_test

import (
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/synth"
)

// TestLoaderReadsFixtures opens the committed fixtures with the training
// loader (package model/data), which must find every pair, the rig and the
// ground-truth kinds it knows (it does not read occ_right).
func TestLoaderReadsFixtures(t *testing.T) {
	for _, st := range synth.Styles {
		dir := filepath.Join("..", "testdata", "synth", st.String())
		ds, err := data.Open(dir)
		if err != nil {
			t.Fatalf("%s: %v", st, err)
		}
		want, _ := st.Rig(synth.DefaultWidth, synth.DefaultHeight)
		if len(ds.Pairs) != 3 || ds.Rig == nil || *ds.Rig != *want {
			t.Errorf("%s: loader found %d pairs and rig %+v, want 3 and %+v", st, len(ds.Pairs), ds.Rig, want)
		}
		got := strings.Join(ds.Truth, " ")
		for _, k := range []string{"disp_left", "disp_right", "depth_left", "occ_left"} {
			if !strings.Contains(got, k) {
				t.Errorf("%s: loader truth kinds %q lack %s", st, got, k)
			}
		}
	}
}
