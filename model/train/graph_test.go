package train

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
)

// tinyConfig is the smallest instance of the architecture (inputs must be
// at least 64 pixels a side), with narrow layers so tests run fast.
var tinyConfig = model.Config{Width: 64, Height: 64, Encoder: []int{4, 4, 6, 6, 8}, Decoder: []int{4, 4, 4, 6, 6}}

func randomImage(rng *rand.Rand, n, c, h, w int) *planar.Image {
	im := planar.New(n, c, h, w)
	copy(im.Pix, uniform(rng, len(im.Pix), 0, 1))
	return im
}

// The graph built from the architecture computes what the graph-free
// forward pass of package model computes (both walk Arch.Layers with the
// cpu kernels; the graph fuses each sigmoid head with its d_max scale, so
// values may differ by float rounding).
func TestNetworkMatchesGraphFreeForward(t *testing.T) {
	const batch = 2
	rng := rand.New(rand.NewPCG(3, 4))
	w := perturbedWeights(t, tinyConfig, 11, rng)
	img := randomImage(rng, batch, 3, 64, 64)
	ref, err := model.NewInspectNet(w, batch)
	if err != nil {
		t.Fatal(err)
	}
	want, err := ref.Forward(img)
	if err != nil {
		t.Fatal(err)
	}

	g, net := weightedNetwork(t, ref.Arch(), batch, w)
	if err := net.SetInput(img); err != nil {
		t.Fatal(err)
	}
	for _, l := range ref.Arch().Layers { // every layer is a node of its name, or fused
		if net.Node(l.Name) == nil && net.Node(l.Name+".pre") == nil {
			t.Errorf("layer %q has no node", l.Name)
		}
	}
	vm := G.NewTapeMachine(g)
	defer vm.Close()
	if err := vm.RunAll(); err != nil {
		t.Fatal(err)
	}
	checkScales(t, net, want)
	// Intermediate tensors agree too.
	for _, name := range []string{"enc1a", "enc5b", "dec4.cat", "dec0"} {
		got := net.Node(name).Value().Data().([]float32)
		if d := maxDiff(got, ref.Tensor(name)); d > 1e-5 {
			t.Errorf("%s: max difference %g", name, d)
		}
	}
}

// The training graph's disparities (the objective's copies) equal the
// graph-free forward's, and the whole network's parameter gradients match
// finite differences of the objective on a few sampled parameters.
// perturbedWeights returns fresh weights of c (seed) with every parameter,
// biases too, moved by a normal draw of rng (σ 0.05), so that no layer
// passes zeros on.
func perturbedWeights(t *testing.T, c model.Config, seed uint64, rng *rand.Rand) *model.Weights {
	t.Helper()
	w, err := model.NewWeights(c, seed)
	if err != nil {
		t.Fatal(err)
	}
	if c.Arch == model.StereoArchName {
		PrepareHeads(w)
	}
	for _, v := range w.Params {
		for i := range v {
			v[i] += float32(0.05 * rng.NormFloat64())
		}
	}
	return w
}

// weightedNetwork builds the graph of a for batch and sets the weights w.
func weightedNetwork(t *testing.T, a *model.Arch, batch int, w *model.Weights) (*G.ExprGraph, *network) {
	t.Helper()
	g := G.NewGraph()
	net, err := buildNetwork(g, a, batch)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.SetWeights(w); err != nil {
		t.Fatal(err)
	}
	return g, net
}

// checkScales compares the graph's disparity at every scale, after a run,
// with the graph-free forward's (want), to 1e-5 (float rounding of the
// fused heads).
func checkScales(t *testing.T, net *network, want [model.Scales]*planar.Image) {
	t.Helper()
	for s := range model.Scales {
		got := net.Outputs[s].Value().Data().([]float32)
		if d := maxDiff(got, want[s].Pix); d > 1e-5 {
			t.Errorf("scale %d: max |graph − model.Net| = %g, want ≤ 1e-5", s, d)
		} else {
			t.Logf("scale %d: max |graph − model.Net| = %.3g", s, d)
		}
	}
}

func TestSessionGradients(t *testing.T) {
	const batch = 1
	w, err := model.NewWeights(tinyConfig, 5)
	if err != nil {
		t.Fatal(err)
	}
	left, right := smoothPair(batch, 64, 64, 3)
	s, err := NewSession(w, batch, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	ref, err := model.NewInspectNet(w, batch)
	if err != nil {
		t.Fatal(err)
	}
	want, err := ref.Forward(left)
	if err != nil {
		t.Fatal(err)
	}
	terms, err := s.Forward(left, right)
	if err != nil {
		t.Fatal(err)
	}
	if !(terms.Total > 0) || math.Abs(terms.Appearance+terms.Smoothness+terms.Consistency-terms.Total) > 1e-9 {
		t.Errorf("terms %+v do not add up to a positive total", terms)
	}
	for sc := range model.Scales {
		dl, dr := s.obj.Disparity(sc)
		hw := len(dl)
		if d := math.Max(maxDiff(dl, want[sc].Pix[:hw]), maxDiff(dr, want[sc].Pix[hw:])); d > 1e-5 {
			t.Errorf("scale %d: objective saw disparities %g away from model.Net's", sc, d)
		}
	}
	analytic := map[string][]float32{}
	for _, n := range s.net.Params {
		g, err := n.Grad()
		if err != nil {
			t.Fatalf("%s: %v", n.Name(), err)
		}
		analytic[n.Name()] = append([]float32(nil), g.Data().([]float32)...)
	}
	s.ClearGradients()
	cost := func() float64 {
		t.Helper()
		tm, err := s.Forward(left, right)
		if err != nil {
			t.Fatal(err)
		}
		s.ClearGradients()
		return tm.Total
	}
	// The objective is only piecewise smooth (bilinear sampling, |·|), so
	// finite differences of it through the whole network are dominated by
	// kinks (TestNetworkGradients checks the network with a smooth cost).
	// Here: a small step against the gradient lowers the loss, along it
	// raises it.
	var g2 float64
	for _, ga := range analytic {
		for _, v := range ga {
			g2 += float64(v) * float64(v)
		}
	}
	eps := 1e-3 / math.Sqrt(g2)
	shift := func(k float64) {
		for name, v := range s.net.params {
			for i, gv := range analytic[name] {
				v[i] += float32(k * eps * float64(gv))
			}
		}
	}
	orig := s.Weights()
	shift(1)
	fp := cost()
	if err := s.net.SetWeights(orig); err != nil {
		t.Fatal(err)
	}
	shift(-1)
	fm := cost()
	if err := s.net.SetWeights(orig); err != nil {
		t.Fatal(err)
	}
	t.Logf("loss %.6f, after a step of 1e-3 against the gradient %.6f, along it %.6f", terms.Total, fm, fp)
	if fm >= terms.Total || fp <= terms.Total {
		t.Errorf("a step against the gradient does not lower the loss: %g, %g, %g", fm, terms.Total, fp)
	}
}

// TestNetworkGradients checks the gradient of every parameter tensor of the
// whole network, through gorgonia's TapeMachine, with a smooth cost (a
// random linear probe of disp0, which depends on every layer): the central
// directional derivative along the tensor's own gradient must equal
// |gradient|² (a wrong or lost gradient term changes one side).
func TestNetworkGradients(t *testing.T) {
	w, err := model.NewWeights(tinyConfig, 5)
	if err != nil {
		t.Fatal(err)
	}
	a, err := w.Arch()
	if err != nil {
		t.Fatal(err)
	}
	g := G.NewGraph()
	net, err := buildNetwork(g, a, 2)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.SetWeights(w); err != nil {
		t.Fatal(err)
	}
	left, _ := smoothPair(2, 64, 64, 3)
	if err := net.SetInput(left); err != nil {
		t.Fatal(err)
	}
	p, err := newProbe(net.Outputs[0], rand.New(rand.NewPCG(1, 2)))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := G.Grad(p.node, net.Params...); err != nil {
		t.Fatal(err)
	}
	vm := G.NewTapeMachine(g, G.BindDualValues(net.Params...))
	defer vm.Close()
	cost := func() float64 {
		if err := vm.RunAll(); err != nil {
			t.Fatal(err)
		}
		vm.Reset()
		return p.value
	}
	cost()
	analytic := map[string][]float32{}
	for _, n := range net.Params {
		gv, err := n.Grad()
		if err != nil {
			t.Fatalf("%s: %v", n.Name(), err)
		}
		d := gv.Data().([]float32)
		analytic[n.Name()] = append([]float32(nil), d...)
		clear(d)
	}
	for _, pp := range a.Params {
		ga := analytic[pp.Name]
		var g2 float64
		for _, v := range ga {
			g2 += float64(v) * float64(v)
		}
		if !(g2 > 0) {
			t.Errorf("%s: gradient is zero", pp.Name)
			continue
		}
		v := net.params[pp.Name]
		orig := append([]float32(nil), v...)
		eps := 3e-3 / math.Sqrt(g2)
		for i := range v {
			v[i] = orig[i] + float32(eps*float64(ga[i]))
		}
		fp := cost()
		for i := range v {
			v[i] = orig[i] - float32(eps*float64(ga[i]))
		}
		fm := cost()
		copy(v, orig)
		// 2% for curvature, 1e-5 for float32 rounding of the network (it
		// matters for the heads' biases, whose |gradient|² is ~1e-5).
		if num := (fp - fm) / (2 * eps); math.Abs(num-g2) > 0.02*g2+1e-5 {
			t.Errorf("%s: directional derivative %.4g, |gradient|² %.4g", pp.Name, num, g2)
		}
	}
}

// Every node this package adds to a training graph is named, names are
// unique, and the first layer (fed by the image) has no input gradient.
func TestTrainingGraphNames(t *testing.T) {
	w, err := model.NewWeights(tinyConfig, 1)
	if err != nil {
		t.Fatal(err)
	}
	s, err := NewSession(w, 1, nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	seen := map[string]bool{}
	ours := 0
	for _, n := range s.net.Graph.AllNodes() {
		if _, ok := n.Op().(*kernelOp); !ok {
			continue
		}
		ours++
		if n.Name() == "" {
			t.Errorf("unnamed node %v", n)
		}
		if seen[n.Name()] {
			t.Errorf("name %q used twice", n.Name())
		}
		seen[n.Name()] = true
	}
	for _, want := range []string{"enc1a.pre", "enc1a.pre.dweight", "enc1a.pre.dbias", "enc1b.pre.dx", "head0.pre", "disp0", "disp0.dx", "objective"} {
		if !seen[want] {
			t.Errorf("no node %q", want)
		}
	}
	if seen["enc1a.pre.dx"] {
		t.Error("the first layer has an input-gradient node")
	}
	t.Logf("%d nodes of this package", ours)
}

func TestNetworkErrors(t *testing.T) {
	a, err := model.Build(tinyConfig)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := buildNetwork(G.NewGraph(), a, 0); err == nil {
		t.Error("batch 0 accepted")
	}
	if _, err := buildNetwork(G.NewGraph(), nil, 1); err == nil {
		t.Error("nil architecture accepted")
	}
	net, err := buildNetwork(G.NewGraph(), a, 1)
	if err != nil {
		t.Fatal(err)
	}
	if err := net.SetInput(planar.New(2, 3, 64, 64)); err == nil {
		t.Error("a batch of the wrong size accepted")
	}
	img := planar.New(1, 3, 64, 64)
	img.Pix[7] = float32(math.Inf(1))
	if err := net.SetInput(img); err == nil {
		t.Error("an infinite pixel accepted")
	}
	other := tinyConfig
	other.DMax = 0.2
	w, _ := model.NewWeights(other, 1)
	if err := net.SetWeights(w); err == nil {
		t.Error("weights with another d_max accepted (the heads bake d_max in)")
	}
	wide := tinyConfig
	wide.Encoder = []int{5, 4, 6, 6, 8}
	w, _ = model.NewWeights(wide, 1)
	if err := net.SetWeights(w); err == nil {
		t.Error("weights of another architecture accepted")
	}
	if err := net.SetWeights(nil); err == nil {
		t.Error("nil weights accepted")
	}
}
