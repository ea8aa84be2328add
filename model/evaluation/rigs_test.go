package evaluation

import (
	"context"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/synth"
)

// TestScorePairRigs scores a small set of varied pairs written by synth
// (a rig each in rigs/NAME.json, no rig.json): depth is scored, and each
// pair's depth measures are those of an Estimator given that pair's own
// rig, not another pair's.
func TestScorePairRigs(t *testing.T) {
	dir := t.TempDir()
	if err := synth.WriteDataset(dir, synth.Orchard, 5, 2, &synth.Options{Width: 96, Height: 48}); err != nil {
		t.Fatal(err)
	}
	set, err := dataset.Open(dir)
	if err != nil {
		t.Fatal(err)
	}
	if set.Rig != nil || !set.HasRig() || *set.Pairs[0].Rig == *set.Pairs[1].Rig {
		t.Fatalf("want two pairs with different rigs of their own, got set rig %v, pair rigs %+v, %+v", set.Rig, set.Pairs[0].Rig, set.Pairs[1].Rig)
	}
	if _, z := Scorable(set); !z {
		t.Fatal("depth of a set with a rig per pair is not scorable")
	}
	rep, err := Score(context.Background(), nil, set, nil)
	if err != nil {
		t.Fatal(err)
	}
	if !rep.HasDepth || len(rep.Pairs) != 2 {
		t.Fatalf("report: depth %v, %d pairs", rep.HasDepth, len(rep.Pairs))
	}
	direct := func(i, rigOf int) depth.DepthMetrics {
		rig := set.Pairs[rigOf].Rig
		est, err := model.NewEstimator(nil, &model.EstimatorOptions{Rig: rig, MaxWorkers: 1})
		if err != nil {
			t.Fatal(err)
		}
		r, err := set.Read(i)
		if err != nil {
			t.Fatal(err)
		}
		e, err := est.Estimate(context.Background(), r.Left)
		if err != nil {
			t.Fatal(err)
		}
		m, err := depth.DepthErrors(e.Depth, r.DepthLeft, &depth.DepthOptions{MinDepth: rig.MinDepth, MaxDepth: rig.MaxDepth})
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
	for i := range 2 {
		got, want, other := rep.Pairs[i].Depth, direct(i, i), direct(i, 1-i)
		t.Logf("pair %d: abs rel %.4f with its rig, %.4f with the other pair's", i, got.AbsRel, other.AbsRel)
		if got != want {
			t.Errorf("pair %d: scored %+v, with its own rig %+v", i, got, want)
		}
		if got == other {
			t.Errorf("pair %d: the other pair's rig gives the same scores: the test cannot tell the rigs apart", i)
		}
	}
}
