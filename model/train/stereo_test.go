package train

import (
	"math/rand/v2"
	"slices"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
)

var tinyStereo = model.Config{Arch: model.StereoArchName, Width: 64, Height: 64, Encoder: []int{4, 6, 8}, Decoder: []int{3, 4, 6, 8}}

// The stereo graph computes what model.Net.ForwardPair computes: both walk
// the same layer list with the same kernels, and pack the mirrored pass the
// same way.
func TestStereoNetworkMatchesGraphFreeForward(t *testing.T) {
	const batch = 2
	rng := rand.New(rand.NewPCG(7, 8))
	w := perturbedWeights(t, tinyStereo, 5, rng)
	left, right := randomImage(rng, batch, 3, 64, 64), randomImage(rng, batch, 3, 64, 64)
	ref, err := model.NewNet(w, batch)
	if err != nil {
		t.Fatal(err)
	}
	want, err := ref.ForwardPair(left, right)
	if err != nil {
		t.Fatal(err)
	}
	g, net := weightedNetwork(t, ref.Arch(), batch, w)
	if err := net.SetPair(left, right); err != nil {
		t.Fatal(err)
	}
	if err := net.SetInput(left); err == nil {
		t.Error("SetInput on a stereo network: no error")
	}
	vm := G.NewTapeMachine(g)
	defer vm.Close()
	if err := vm.RunAll(); err != nil {
		t.Fatal(err)
	}
	checkScales(t, net, want)
}

// The graph keeps its matching while the pair stays the same (SetPair
// skips the matcher then) and runs the matcher again when either view
// changes: pairs A, A, B (right view changed), A each give what
// model.Net.ForwardPair gives on them.
func TestStereoMatchingFollowsPair(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	w := perturbedWeights(t, tinyStereo, 5, rng)
	// Right views that are the left shifted by 3 and by 6 pixels, which
	// the matcher finds (on unrelated noise it finds nothing either way).
	left := randomImage(rng, 1, 3, 64, 64)
	shifted := func(d int) *planar.Image {
		r := left.Clone()
		for c := range 3 {
			for y := range 64 {
				for x := range 64 {
					r.Pix[(c*64+y)*64+x] = left.Pix[(c*64+y)*64+min(x+d, 63)]
				}
			}
		}
		return r
	}
	right, other := shifted(3), shifted(6)
	ref, err := model.NewNet(w, 1)
	if err != nil {
		t.Fatal(err)
	}
	g, net := weightedNetwork(t, ref.Arch(), 1, w)
	vm := G.NewTapeMachine(g)
	defer vm.Close()
	var outs [][]float32
	for _, r := range []*planar.Image{right, right, other, right} {
		want, err := ref.ForwardPair(left, r)
		if err != nil {
			t.Fatal(err)
		}
		if err := net.SetPair(left, r); err != nil {
			t.Fatal(err)
		}
		if err := vm.RunAll(); err != nil {
			t.Fatal(err)
		}
		checkScales(t, net, want)
		outs = append(outs, slices.Clone(net.Outputs[0].Value().Data().([]float32)))
		vm.Reset()
	}
	if maxDiff(outs[0], outs[2]) < 1e-3 {
		t.Fatalf("the two pairs give outputs within %g: the check above cannot tell a stale matching", maxDiff(outs[0], outs[2]))
	}
}

// A few steps of the objective on one pair lower it: the stereo graph has
// every gradient it needs.
func TestStereoSessionLearns(t *testing.T) {
	w, err := model.NewWeights(tinyStereo, 9)
	if err != nil {
		t.Fatal(err)
	}
	PrepareHeads(w)
	rng := rand.New(rand.NewPCG(1, 2))
	// A right view that is the left shifted by 3 pixels.
	left := randomImage(rng, 1, 3, 64, 64)
	right := left.Clone()
	for c := range 3 {
		for y := range 64 {
			for x := range 64 {
				xs := min(x+3, 63)
				right.Pix[(c*64+y)*64+x] = left.Pix[(c*64+y)*64+xs]
			}
		}
	}
	s, err := NewSession(w, 1, nil, &AdamConfig{LearningRate: 1e-3})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	first, err := s.Step(left, right)
	if err != nil {
		t.Fatal(err)
	}
	var last float64
	for range 30 {
		tm, err := s.Step(left, right)
		if err != nil {
			t.Fatal(err)
		}
		last = tm.Total
	}
	t.Logf("objective %.5f → %.5f", first.Total, last)
	if !(last < first.Total) {
		t.Errorf("objective did not fall: %.5f → %.5f", first.Total, last)
	}
}
