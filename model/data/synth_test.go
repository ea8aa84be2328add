package data

import (
	"math"
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

// rebuildError warps the right image by the left disparity (package warp,
// RebuildLeft) and returns the mean absolute difference from the left
// image over the pixels that have ground truth, are visible in the right
// view (occlusion map 0) and sample inside the right image.
func rebuildError(t *testing.T, s *Sample) (float64, int) {
	t.Helper()
	rebuilt, mask, err := warp.Warp(s.Right, s.DispLeft, warp.RebuildLeft, warp.Zero)
	if err != nil {
		t.Fatal(err)
	}
	plane := s.Left.H * s.Left.W
	sum, n := 0.0, 0
	for i := 0; i < plane; i++ {
		if s.DispLeft.Pix[i] <= 0 || mask.Pix[i] == 0 || (s.OccLeft != nil && s.OccLeft.Pix[i] != 0) {
			continue
		}
		for c := 0; c < 3; c++ {
			sum += math.Abs(float64(rebuilt.Pix[c*plane+i] - s.Left.Pix[c*plane+i]))
		}
		n++
	}
	return sum / float64(3*max(n, 1)), n
}

// TestSynthFolders reads the committed synthetic datasets (package synth,
// testdata/synth, 256×128 with exact ground truth) and checks the loader's
// geometry on data made outside this package: the right image warped by
// the loaded left disparity must rebuild the left image where the left
// pixel is visible, before and after FlipSwap, while mirroring without
// swapping must not.
func TestSynthFolders(t *testing.T) {
	for _, style := range []string{"greenhouse", "storage"} {
		ds, err := dataset.Open(filepath.Join("..", "..", "testdata", "synth", style))
		if err != nil {
			t.Fatal(err)
		}
		if len(ds.Pairs) != 3 || ds.Rig == nil || len(ds.Truth) != 5 {
			t.Fatalf("%s: %d pairs, rig %v, truth %v", style, len(ds.Pairs), ds.Rig, ds.Truth)
		}
		for i := range ds.Pairs {
			s, err := LoadSample(ds, i, 256, 128)
			if err != nil {
				t.Fatal(err)
			}
			// A bound on the error of rebuilding from exact truth: texture
			// resampling and 8-bit quantisation leave under 0.5 % (seen up to 0.0048; our
			// tolerance, from the values seen).
			const good = 0.01
			e0, n0 := rebuildError(t, s)
			if e0 > good || n0 < 256*128/2 {
				t.Errorf("%s/%s: rebuild error %.4f over %d pixels", style, s.Name, e0, n0)
			}
			bad := &Sample{Left: mirror(s.Left.Clone()), Right: mirror(s.Right.Clone()), DispLeft: mirror(s.DispLeft.Clone()), OccLeft: mirror(s.OccLeft.Clone())}
			FlipSwap(s)
			e1, n1 := rebuildError(t, s)
			if e1 > good || n1 < 256*128/2 {
				t.Errorf("%s/%s flipped: rebuild error %.4f over %d pixels", style, s.Name, e1, n1)
			}
			e2, _ := rebuildError(t, bad)
			if e2 < 5*e1 {
				t.Errorf("%s/%s: mirroring without swapping rebuilds with error %.4f, not clearly worse than %.4f", style, s.Name, e2, e1)
			}
			t.Logf("%s/%s: rebuild error %.4f (%d px), flipped %.4f (%d px), mirrored only %.4f", style, s.Name, e0, n0, e1, n1, e2)

			// Downscaled by 2, the disparity keeps its fraction of the width.
			h, err := LoadSample(ds, i, 128, 64)
			if err != nil {
				t.Fatal(err)
			}
			full, _ := LoadSample(ds, i, 256, 128)
			if !sameAt(h.DispLeft, full.DispLeft, 10, 20) {
				t.Errorf("%s/%s: half-size disparity differs from the full-size one", style, s.Name)
			}
		}
	}
}

// sameAt reports whether half-size map h at (x, y) equals the full-size map
// f at the pixel nearest sampling picks, (2x+1, 2y+1).
func sameAt(h, f *planar.Image, x, y int) bool {
	return h.At(0, 0, y, x) == f.At(0, 0, 2*y+1, 2*x+1) && h.At(0, 0, y, x) > 0
}
