package train_test

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/planar"
)

// A training loop: a Session over fresh weights, a learning-rate warm-up,
// the per-term losses of every step, and the solver state for a
// checkpoint.
func ExampleSession() {
	cfg := model.Config{Width: 64, Height: 64, Encoder: []int{4, 4, 6, 6, 8}, Decoder: []int{4, 4, 4, 6, 6}}
	w, err := model.NewWeights(cfg, 1)
	if err != nil {
		panic(err)
	}
	s, err := train.NewSession(w, 1, nil, nil)
	if err != nil {
		panic(err)
	}
	defer s.Close()

	// A textured left view and a right view shifted by 2 pixels
	// (invented data, for the demo).
	left, right := planar.New(1, 3, 64, 64), planar.New(1, 3, 64, 64)
	for c := range 3 {
		for y := range 64 {
			for x := range 64 {
				tex := func(x float64) float32 {
					return float32(0.5 + 0.3*math.Sin(0.6*x+0.4*float64(y)+float64(c)))
				}
				left.Set(0, c, y, x, tex(float64(x)))
				right.Set(0, c, y, x, tex(float64(x)+2))
			}
		}
	}

	var first, last float64
	for step := range 30 {
		lr := 3e-3 * math.Min(1, float64(step+1)/5) // warm-up over 5 steps
		if err := s.Solver.SetLearningRate(lr); err != nil {
			panic(err)
		}
		terms, err := s.Step(left, right)
		if err != nil {
			panic(err) // errors.Is(err, train.ErrNonFiniteGradient): skip the batch instead
		}
		if step == 0 {
			first = terms.Total
		}
		last = terms.Total
	}
	state := s.Solver.State() // save with the weights; restore with SetState
	fmt.Println("loss fell:", last < first)
	fmt.Println("solver steps:", state.Step)
	fmt.Println("moments saved for enc1a.weight:", len(state.M["enc1a.weight"]))
	// Output:
	// loss fell: true
	// solver steps: 30
	// moments saved for enc1a.weight: 108
}
