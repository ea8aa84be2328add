package sgm

import (
	"context"
	"image"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
)

// benchmarkMatch times MatchInto on one pair with maps reused (the steady
// state), reporting allocations and the process CPU time per call.
func benchmarkMatch(b *testing.B, o Options, left, right image.Image) {
	m, err := NewMatcher(&o)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	var res Result
	if err := m.MatchInto(ctx, &res, left, right); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	b.ResetTimer()
	cpu := processCPU()
	for range b.N {
		if err := m.MatchInto(ctx, &res, left, right); err != nil {
			b.Fatal(err)
		}
	}
	if c := processCPU(); c > 0 {
		b.ReportMetric(float64(c-cpu)/float64(b.N), "cpu-ns/op")
	}
}

// The sizes and ranges of issue 15's targets: Motorcycle at 370×250 with 48
// disparities, and a synthetic step-edge scene at 640×480 with 80.
func BenchmarkMatch_Motorcycle_370x250_D48(b *testing.B) {
	benchmarkMatch(b, Options{MaxDisparity: 47}, testutil.PNG(b, "../testdata/motorcycle/left.png"), testutil.PNG(b, "../testdata/motorcycle/right.png"))
}

func BenchmarkMatch_Motorcycle_370x250_D48_8paths(b *testing.B) {
	benchmarkMatch(b, Options{MaxDisparity: 47, Paths: 8}, testutil.PNG(b, "../testdata/motorcycle/left.png"), testutil.PNG(b, "../testdata/motorcycle/right.png"))
}

func BenchmarkMatch_Step_640x480_D80(b *testing.B) {
	l, r := stepPair(640, 480, 300, 12, 50)
	benchmarkMatch(b, Options{MaxDisparity: 79}, l, r)
}

func BenchmarkMatch_Step_640x480_D80_8paths(b *testing.B) {
	l, r := stepPair(640, 480, 300, 12, 50)
	benchmarkMatch(b, Options{MaxDisparity: 79, Paths: 8}, l, r)
}
