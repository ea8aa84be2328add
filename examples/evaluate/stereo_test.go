package main

import (
	"bytes"
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/internal/testutil/weightfiles"
	"github.com/parallaxdepth/parallax/model"
)

// TestStereoAdapt: -stereo scores the embedded stereo weights on one
// committed synthetic pair (-pair) and -adapt fine-tunes them for two
// steps before the second evaluation; the titles name the stereo weights.
func TestStereoAdapt(t *testing.T) {
	g := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	pair := strings.Join([]string{filepath.Join(g, "left", "000000.png"), filepath.Join(g, "right", "000000.png"), filepath.Join(g, "truth", "disp_left", "000000.pfm")}, ",")
	var out, log bytes.Buffer
	if err := run(context.Background(), []string{"-stereo", "-adapt", "2", "-adapt-batch", "1", "-quiet", "-pair", pair, "-rig", filepath.Join(g, "rig.json")}, &out, &log); err != nil {
		t.Fatal(err)
	}
	st, err := model.DefaultStereo()
	if err != nil {
		t.Fatal(err)
	}
	s := out.String()
	for _, want := range []string{"before adaptation: weights embedded (" + st.Provenance[model.ProvenanceStatus] + ")", "after adaptation: weights embedded (train.batch=1",
		"adaptation: 2 steps", "EPE px, holes as 0", "bad-3 %, holes filled along the scan line"} {
		if !strings.Contains(s, want) {
			t.Errorf("output lacks %q:\n%s", want, s)
		}
	}
}

// TestStereoKind: the weights' kind must match -stereo, and -stereo goes
// with the network; each error names the file or the flag.
func TestStereoKind(t *testing.T) {
	files := weightfiles.Embedded(t)
	for _, c := range []struct {
		args []string
		want []string
	}{
		{[]string{"-stereo", "-weights", files.OneImage}, []string{files.OneImage, "one-image weights, not stereo weights"}},
		{[]string{"-weights", files.Stereo}, []string{files.Stereo, "stereo weights, not one-image weights"}},
		{[]string{"-method", "sgm", "-stereo"}, []string{"-stereo go with -method network"}},
		{[]string{"-stereo", "-flip"}, []string{"flip post-processing is for one-image weights"}},
	} {
		var out, log bytes.Buffer
		err := run(context.Background(), append(c.args, "-quiet", filepath.Join("..", "..", "testdata", "synth", "greenhouse")), &out, &log)
		testutil.WantError(t, fmt.Sprintf("%q", c.args), err, "evaluate: ", c.want...)
	}
}
