package train

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/planar"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// smoothPair returns a left image with smooth texture and a right image
// that is the left shifted by shift pixels (x_R = x_L − shift), so that
// d_L = shift/W is the true disparity.
func smoothPair(n, h, w int, shift float64) (left, right *planar.Image) {
	left, right = planar.New(n, 3, h, w), planar.New(n, 3, h, w)
	tex := func(k, c, y int, x float64) float32 {
		fy, fc := float64(y), float64(c)
		return float32(0.5 + 0.2*math.Sin(0.7*x+0.3*fy+fc+float64(k)) + 0.15*math.Cos(0.23*x-0.5*fy+2*fc))
	}
	for k := range n {
		for c := range 3 {
			for y := range h {
				for x := range w {
					left.Set(k, c, y, x, tex(k, c, y, float64(x)))
					right.Set(k, c, y, x, tex(k, c, y, float64(x)+shift))
				}
			}
		}
	}
	return left, right
}

// The objective node's value and per-term values equal loss.Objective.Eval
// on the same inputs, and the gradients gorgonia returns for each scale's
// disparity tensor equal central differences of the objective.
func TestObjectiveNode(t *testing.T) {
	const n, h, w = 2, 8, 16
	rng := rand.New(rand.NewPCG(21, 22))
	left, right := smoothPair(n, h, w, 1.5)
	g := G.NewGraph()
	var disps []*G.Node
	var vals [][]float32
	for s := range 3 {
		hs, ws := h>>s, w>>s
		// d·W_s a whole number plus a fraction in [0.25, 0.75], so that
		// no sample position sits near a bilinear kink.
		// Neighbours differ by at least 0.004, away from the kink of the
		// smoothness term's |∂d|.
		v := make([]float32, n*2*hs*ws)
		for i := range v {
			for {
				v[i] = float32((float64(rng.IntN(3)) + 0.25 + 0.5*rng.Float64()) / float64(ws))
				x, y := i%ws, i/ws%hs
				if (x == 0 || math.Abs(float64(v[i]-v[i-1])) > 0.004) && (y == 0 || math.Abs(float64(v[i]-v[i-ws])) > 0.004) {
					break
				}
			}
		}
		vals = append(vals, v)
		disps = append(disps, G.NewTensor(g, tensor.Float32, 4, G.WithShape(n, 2, hs, ws), G.WithName("disp"+string(rune('0'+s))),
			G.WithValue(tensor.New(tensor.WithShape(n, 2, hs, ws), tensor.WithBacking(v)))))
	}
	obj, err := newGraphObjective("objective", disps, nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := obj.SetImages(left, right); err != nil {
		t.Fatal(err)
	}
	if _, err := G.Grad(obj.Cost(), disps...); err != nil {
		t.Fatal(err)
	}
	vm := G.NewTapeMachine(g, G.BindDualValues(disps...))
	defer vm.Close()
	run := func() loss.Terms {
		if err := vm.RunAll(); err != nil {
			t.Fatal(err)
		}
		vm.Reset()
		return obj.Terms()
	}
	got := run()

	// Reference: the loss kernel called directly, images downsampled with
	// loss.Pyramid, disparities split by channel.
	lp, _ := loss.Pyramid(left, 3)
	rp, _ := loss.Pyramid(right, 3)
	var scales []loss.Scale
	for s := range 3 {
		hw := (h >> s) * (w >> s)
		dl, dr := make([]float32, n*hw), make([]float32, n*hw)
		for k := range n {
			copy(dl[k*hw:], vals[s][2*k*hw:(2*k+1)*hw])
			copy(dr[k*hw:], vals[s][(2*k+1)*hw:(2*k+2)*hw])
		}
		scales = append(scales, loss.Scale{Left: lp[s].Pix, Right: rp[s].Pix, DispL: dl, DispR: dr, Shape: loss.Shape{N: n, C: 3, H: h >> s, W: w >> s}})
	}
	var k loss.Objective
	kgrads := make([]loss.DispGrad, len(scales))
	for s, sc := range scales {
		kgrads[s] = loss.DispGrad{DispL: make([]float32, len(sc.DispL)), DispR: make([]float32, len(sc.DispR))}
	}
	want := k.Eval(nil, kgrads, scales)
	if got != want {
		t.Errorf("terms %+v, loss.Objective.Eval gives %+v", got, want)
	}
	if c := float32(*obj.Cost().Value().(*G.F32)); c != float32(want.Total) {
		t.Errorf("cost node %v, want %v", c, float32(want.Total))
	}
	ps := obj.PerScale()
	if len(ps) != 3 || math.Abs(ps[0].Total+ps[1].Total+ps[2].Total-got.Total) > 1e-12 {
		t.Errorf("per-scale terms %+v do not add up to %v", ps, got.Total)
	}

	var grads [][]float32
	for _, d := range disps {
		gv, _ := d.Grad()
		grads = append(grads, append([]float32(nil), gv.Data().([]float32)...))
	}
	// The node's gradients are the kernel's, rearranged to (N, 2, H, W).
	for s := range disps {
		hw := len(kgrads[s].DispL) / n
		for k := range n {
			gl := grads[s][2*k*hw : (2*k+1)*hw]
			gr := grads[s][(2*k+1)*hw : (2*k+2)*hw]
			if maxDiff(gl, kgrads[s].DispL[k*hw:(k+1)*hw]) != 0 || maxDiff(gr, kgrads[s].DispR[k*hw:(k+1)*hw]) != 0 {
				t.Errorf("scale %d image %d: node gradient differs from loss.Objective's", s, k)
			}
		}
	}
	for s, d := range disps {
		x := vals[s]
		orig := append([]float32(nil), x...)
		f := func(p []float32) float64 { copy(x, p); return run().Total }
		// Step and tolerances as in package loss's own objective check
		// (TestObjectiveGradient): the L1 term keeps rare kinks.
		res, err := checkGradient(f, orig, grads[s], 1.0/8192, 2e-4, 2e-2)
		copy(x, orig)
		if err != nil {
			t.Errorf("%s: %v", d.Name(), err)
		} else {
			t.Logf("%s: %d elements, max |analytic − numeric| %.3g", d.Name(), res.Checked, res.MaxAbsErr)
		}
	}
}

func TestObjectiveErrors(t *testing.T) {
	g := G.NewGraph()
	d0 := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 8, 8), G.WithName("d0"))
	bad := G.NewTensor(g, tensor.Float32, 4, G.WithShape(1, 2, 3, 4), G.WithName("bad"))
	if _, err := newGraphObjective("o", []*G.Node{d0, bad}, nil); err == nil {
		t.Error("a scale of the wrong size was accepted")
	}
	if _, err := newGraphObjective("o", nil, nil); err == nil {
		t.Error("no disparities accepted")
	}
	obj, err := newGraphObjective("o", []*G.Node{d0}, nil)
	if err != nil {
		t.Fatal(err)
	}
	l, r := smoothPair(1, 8, 8, 1)
	r.Pix[5] = float32(math.NaN())
	if err := obj.SetImages(l, r); err == nil {
		t.Error("NaN image accepted")
	}
	if err := obj.SetImages(l, planar.New(1, 3, 8, 4)); err == nil {
		t.Error("mismatched image accepted")
	}
	vm := G.NewTapeMachine(g)
	defer vm.Close()
	if err := vm.RunAll(); err == nil {
		t.Error("a run without images succeeded")
	}
}
