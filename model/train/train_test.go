package train

import (
	"path/filepath"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
)

// loadHalf reads a PNG of testdata/synth and halves it (2×2 area average,
// loss.Downsample2) so that the test network is small.
func loadHalf(t testing.TB, parts ...string) *planar.Image {
	t.Helper()
	full := testutil.Planar(t, filepath.Join(append([]string{"..", "..", "testdata", "synth"}, parts...)...))
	half := planar.New(full.N, full.C, full.H/2, full.W/2)
	loss.Downsample2(half.Pix, full.Pix, loss.Shape{N: full.N, C: full.C, H: full.H, W: full.W})
	return half
}

// tinyPair returns the first synthetic greenhouse pair halved and random
// weights of the tiny configuration at its size.
func tinyPair(t *testing.T) (left, right *planar.Image, w *model.Weights) {
	t.Helper()
	left = loadHalf(t, "greenhouse", "left", "000000.png")
	right = loadHalf(t, "greenhouse", "right", "000000.png")
	cfg := tinyConfig
	cfg.Width, cfg.Height = left.W, left.H
	w, err := model.NewWeights(cfg, 1)
	if err != nil {
		t.Fatal(err)
	}
	return left, right, w
}

// The tiny configuration of the architecture, trained through gorgonia's
// TapeMachine with these operators and Adam on one synthetic greenhouse
// pair (testdata/synth, made by package synth), lowers the objective.
func TestTrainingLowersLoss(t *testing.T) {
	left, right, w := tinyPair(t)
	s, err := NewSession(w, 1, nil, &AdamConfig{LearningRate: 3e-3})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	const steps = 40
	var first, last loss.Terms
	for i := range steps {
		terms, err := s.Step(left, right)
		if err != nil {
			t.Fatalf("step %d: %v", i, err)
		}
		if i == 0 {
			first = terms
		}
		last = terms
	}
	t.Logf("objective %.4f → %.4f after %d steps (appearance %.4f → %.4f)", first.Total, last.Total, steps, first.Appearance, last.Appearance)
	if !(last.Total < 0.9*first.Total) {
		t.Errorf("objective fell from %.4f only to %.4f in %d steps, want below 90%%", first.Total, last.Total, steps)
	}
	if s.Solver.State().Step != steps {
		t.Errorf("solver took %d steps, want %d", s.Solver.State().Step, steps)
	}
	// The trained weights are valid model weights that the graph-free
	// forward pass can run.
	tw := s.Weights()
	if err := tw.Check(); err != nil {
		t.Fatal(err)
	}
	net, err := model.NewNet(tw, 1)
	if err != nil {
		t.Fatal(err)
	}
	out, err := net.Forward(left)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := s.Forward(left, right); err != nil {
		t.Fatal(err)
	}
	s.ClearGradients()
	dl, _ := s.obj.Disparity(0)
	if d := maxDiff(dl, out[0].Pix[:len(dl)]); d > 1e-5 {
		t.Errorf("trained graph and model.Net differ by %g", d)
	}
}
