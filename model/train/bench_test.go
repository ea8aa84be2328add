package train

import (
	"math/rand/v2"
	"testing"

	"github.com/parallaxdepth/parallax/model"
)

// benchmarkStep measures one training step (forward, backward through the
// objective and every layer, Adam update) of the architecture c at the
// given batch size.
func benchmarkStep(b *testing.B, c model.Config, batch int) {
	w, err := model.NewWeights(c, 1)
	if err != nil {
		b.Fatal(err)
	}
	s, err := NewSession(w, batch, nil, nil)
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	a := s.net.Arch
	rng := rand.New(rand.NewPCG(1, 2))
	left := randomImage(rng, batch, 3, a.Input.H, a.Input.W)
	right := randomImage(rng, batch, 3, a.Input.H, a.Input.W)
	if _, err := s.Step(left, right); err != nil { // buffers allocated here
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := s.Step(left, right); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkStep256x128N4(b *testing.B) { benchmarkStep(b, model.Config{}, 4) }
func BenchmarkStepTinyN1(b *testing.B)    { benchmarkStep(b, tinyConfig, 1) }

func BenchmarkStereoStep256x128N4(b *testing.B) {
	benchmarkStep(b, model.Config{Arch: model.StereoArchName}, 4)
}
