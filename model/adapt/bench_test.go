package adapt

import (
	"context"
	"testing"

	"github.com/parallaxdepth/parallax/model"
)

// BenchmarkStepDefault times one adaptation step of the default one-image
// weights at their training size (a check every 10 steps is included in
// the mean). Run on an idle machine:
//
//	go test -run '^$' -bench StepDefault -benchtime 20x ./model/adapt
func BenchmarkStepDefault(b *testing.B) {
	est, err := model.NewEstimator(nil, nil)
	if err != nil {
		b.Fatal(err)
	}
	a, err := New(est, &Options{HoldOut: 2, MaxDrift: DriftOff, Margin: 1})
	if err != nil {
		b.Fatal(err)
	}
	defer a.Close()
	for _, p := range drive(b, 8) {
		if err := a.Offer(p.left, p.right); err != nil {
			b.Fatal(err)
		}
		if err := a.take(); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		if err := a.Step(context.Background()); err != nil {
			b.Fatal(err)
		}
	}
}
