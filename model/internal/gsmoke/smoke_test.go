package gsmoke

import (
	"math"
	"testing"

	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// TestGorgoniaGraphGradient builds y = sum(w*x)^2 and checks the gradient
// gorgonia computes against the closed form dy/dw = 2*sum(w*x)*x. It catches a
// dependency regression such as the start-up panic of gorgonia v0.9.18 on
// Go 1.26 when go4.org/unsafe/assume-no-moving-gc is too old.
func TestGorgoniaGraphGradient(t *testing.T) {
	g := G.NewGraph()
	xv := []float64{1, 2, 3}
	wv := []float64{0.5, -1, 2}
	x := G.NewVector(g, tensor.Float64, G.WithShape(3), G.WithName("x"), G.WithValue(tensor.New(tensor.WithBacking(append([]float64(nil), xv...)))))
	w := G.NewVector(g, tensor.Float64, G.WithShape(3), G.WithName("w"), G.WithValue(tensor.New(tensor.WithBacking(append([]float64(nil), wv...)))))
	prod := G.Must(G.HadamardProd(w, x))
	s := G.Must(G.Sum(prod))
	y := G.Must(G.Square(s))
	if _, err := G.Grad(y, w); err != nil {
		t.Fatalf("Grad: %v", err)
	}
	vm := G.NewTapeMachine(g, G.BindDualValues(w))
	defer vm.Close()
	if err := vm.RunAll(); err != nil {
		t.Fatalf("RunAll: %v", err)
	}
	sum := 0.0
	for i := range xv {
		sum += xv[i] * wv[i]
	}
	if got := y.Value().Data().(float64); math.Abs(got-sum*sum) > 1e-12 {
		t.Fatalf("y = %v, want %v", got, sum*sum)
	}
	gv, err := w.Grad()
	if err != nil {
		t.Fatalf("w.Grad: %v", err)
	}
	got := gv.Data().([]float64)
	for i := range xv {
		want := 2 * sum * xv[i]
		if math.Abs(got[i]-want) > 1e-12 {
			t.Errorf("dy/dw[%d] = %v, want %v", i, got[i], want)
		}
	}
}
