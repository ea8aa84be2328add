package evaluation

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/sgm"
)

// TestHolesNumpy scores the committed estimates with their holes as 0 and
// filled along the scan line, and compares every pair's disparity measures
// and the means with numpy 1.24.2 (make.py in testdata/evaluation, whose
// fill is written from the definition, independently of sgm.FillHoles).
// Depth is unaffected by the hole rule.
func TestHolesNumpy(t *testing.T) {
	ref := loadReference(t)
	set, names := fixtureSet(t)
	for _, h := range []Holes{HolesZero, HolesFilled} {
		rep, err := ScoreMethod(context.Background(), &fileEstimator{names: names}, set, &ScoreOptions{Holes: h, Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		for i, p := range ref.Pairs {
			want := p.DisparityZero
			if h == HolesFilled {
				want = p.DisparityFilled
			}
			checkDisparity(t, h.String()+" "+p.Name, rep.Pairs[i].Disparity, want)
			checkDepth(t, h.String()+" "+p.Name, rep.Pairs[i].Depth, p.Depth)
		}
		want := ref.MeanDisparityZero
		if h == HolesFilled {
			want = ref.MeanDisparityFilled
		}
		checkDisparity(t, h.String()+" mean", rep.Disparity, want)
	}
	if _, err := ScoreMethod(context.Background(), &fileEstimator{names: names}, set, &ScoreOptions{Holes: 7}); err == nil || !strings.Contains(err.Error(), "not a hole rule") {
		t.Errorf("Holes 7: %v", err)
	}
}

// TestSGMMethod runs the semi-global matcher through ScoreMethod on the
// Motorcycle pair (testdata/motorcycle, Middlebury 2014 via
// python3-skimage): holes filled, it must score every pixel with truth and
// stay within the issue-15 target (bad-3 ≤ 8.5 %, EPE ≤ 1.1 px, sgm's own
// benchmark figure); holes as 0 it must score worse.
func TestSGMMethod(t *testing.T) {
	mot := filepath.Join("..", "..", "testdata", "motorcycle")
	set, err := dataset.FromFiles(filepath.Join(mot, "left.png"), filepath.Join(mot, "right.png"),
		map[dataset.Kind]string{dataset.DispLeft: filepath.Join(mot, "disp_left.pfm")}, "")
	if err != nil {
		t.Fatal(err)
	}
	m, err := sgm.NewMatcher(&sgm.Options{MaxDisparity: 47})
	if err != nil {
		t.Fatal(err)
	}
	filled, err := ScoreMethod(context.Background(), SGM(m, nil), set, &ScoreOptions{Holes: HolesFilled})
	if err != nil {
		t.Fatal(err)
	}
	zero, err := ScoreMethod(context.Background(), SGM(m, nil), set, &ScoreOptions{Holes: HolesZero})
	if err != nil {
		t.Fatal(err)
	}
	f, z := filled.Disparity, zero.Disparity
	t.Logf("Motorcycle, sgm defaults: filled EPE %.3f px bad-3 %.2f %%; holes as 0 EPE %.3f px bad-3 %.2f %%", f.EPE, 100*f.Bad3, z.EPE, 100*z.Bad3)
	if f.N != z.N || f.EPE > 1.1 || f.Bad3 > 0.085 || z.EPE <= f.EPE {
		t.Errorf("filled %+v, as 0 %+v", f, z)
	}
}

// TestScoreRules: one scoring under both rules gives the same reports as
// scoring under each rule alone (the numpy-checked path), with one
// estimate per pair.
func TestScoreRules(t *testing.T) {
	set, names := fixtureSet(t)
	est := &fileEstimator{names: names}
	reps, err := ScoreRules(context.Background(), est, set, &ScoreOptions{Workers: 3}, HolesFilled, HolesZero, HolesExcluded)
	if err != nil {
		t.Fatal(err)
	}
	if est.calls.Load() != 4 || len(reps) != 3 {
		t.Fatalf("%d estimates, %d reports", est.calls.Load(), len(reps))
	}
	for _, r := range reps {
		alone, err := ScoreMethod(context.Background(), &fileEstimator{names: names}, set, &ScoreOptions{Holes: r.Holes})
		if err != nil {
			t.Fatal(err)
		}
		if fmt.Sprint(alone) != fmt.Sprint(r) {
			t.Errorf("%v: ScoreRules %+v, alone %+v", r.Holes, r, alone)
		}
	}
	if len(reps[2].Notes()) != 2 || !strings.Contains(reps[2].Notes()[0], ": c") {
		t.Errorf("notes %q", reps[2].Notes())
	}
}
