package evaluation

import (
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
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

// TestNewMethodOptions: each option that does not belong to the method is
// an error; with Depth the matcher's estimates carry the rig's metric
// depth inside its range, stretched to an image of another aspect ratio
// only with StretchRig.
func TestNewMethodOptions(t *testing.T) {
	st, err := model.DefaultStereo()
	if err != nil {
		t.Fatal(err)
	}
	set, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", "greenhouse"))
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range []struct {
		name, method string
		w            *model.Weights
		opt          MethodOptions
		want         string
	}{
		{"fill with the network", "network", nil, MethodOptions{FillHoles: true}, "holes belongs to sgm"},
		{"flip with stereo", "network", st, MethodOptions{Flip: true}, "flip post-processing is for one-image weights"},
		{"flip with sgm", "sgm", nil, MethodOptions{Flip: true}, "belongs to the network"},
		{"weights for sgm", "sgm", st, MethodOptions{}, "sgm takes no weights"},
		{"depth without a rig", "sgm", nil, MethodOptions{Depth: true}, "needs a rig"},
		{"unknown", "census", nil, MethodOptions{}, `unknown method "census" (network or sgm)`},
	} {
		if _, err := NewMethod(c.method, c.w, &c.opt); err == nil || !strings.HasPrefix(err.Error(), "evaluation: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: %v, want an error with %q", c.name, err, c.want)
		}
	}
	r, err := set.Read(0)
	if err != nil {
		t.Fatal(err)
	}
	m, err := NewMethod("sgm", nil, &MethodOptions{Rig: set.Rig, Depth: true, FillHoles: true})
	if err != nil {
		t.Fatal(err)
	}
	e, err := m.EstimatePair(context.Background(), r.Left, r.Right)
	if err != nil {
		t.Fatal(err)
	}
	if e.Depth == nil || e.Rig == nil || e.Depth.Valid() == 0 {
		t.Fatalf("sgm with Depth: no depth")
	}
	if zs := e.Depth.Stats(); float64(zs.Min) < set.Rig.MinDepth || float64(zs.Max) > set.Rig.MaxDepth {
		t.Errorf("depth %v … %v m outside the rig's range %v … %v m", zs.Min, zs.Max, set.Rig.MinDepth, set.Rig.MaxDepth)
	}
	wide := *set.Rig // a rig for images twice as wide
	wide.Width, wide.Fx, wide.Cx = 2*wide.Width, 2*wide.Fx, 2*wide.Cx+0.5
	for _, stretch := range []bool{false, true} {
		m, err := NewMethod("sgm", nil, &MethodOptions{Rig: &wide, Depth: true, StretchRig: stretch})
		if err != nil {
			t.Fatal(err)
		}
		_, err = m.EstimatePair(context.Background(), r.Left, r.Right)
		if (err == nil) != stretch {
			t.Errorf("StretchRig %v with a rig of another aspect ratio: %v", stretch, err)
		}
	}
}
