package loss

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"
)

// readJSON decodes a fixture from testdata/loss into v.
func readJSON(t testing.TB, name string, v any) {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "testdata", "loss", name))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, v); err != nil {
		t.Fatal(err)
	}
}

func to32(a []float64) []float32 {
	out := make([]float32, len(a))
	for i, v := range a {
		out[i] = float32(v)
	}
	return out
}

// uniform returns n values drawn uniformly from [lo, hi).
func uniform(rng *rand.Rand, n int, lo, hi float64) []float32 {
	out := make([]float32, n)
	for i := range out {
		out[i] = float32(lo + (hi-lo)*rng.Float64())
	}
	return out
}

// closeSlices reports the first element where got and want differ by more
// than tol (absolute).
func closeSlices(t *testing.T, what string, got []float32, want []float64, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", what, len(got), len(want))
	}
	worst, at := 0.0, -1
	for i := range got {
		d := math.Abs(float64(got[i]) - want[i])
		if !(d <= worst) {
			worst, at = d, i
		}
	}
	if worst > tol || math.IsNaN(worst) {
		t.Errorf("%s: max |difference| %.3g at %d (got %v, want %v), tolerance %.3g", what, worst, at, got[at], want[at], tol)
	}
}

// safeDisparities redraws disparities whose sample position u = x + dir·W·d
// lies within margin of an integer, where bilinear sampling has a kink (and
// the mask a jump at 0 and W−1), so that finite differences stay on one
// linear piece.
func safeDisparities(rng *rand.Rand, d []float32, w int, dir float64, lo, hi, margin float64) {
	for i := range d {
		for {
			u := float64(i%w) + dir*float64(w)*float64(d[i])
			if math.Abs(u-math.Round(u)) >= margin {
				break
			}
			d[i] = float32(lo + (hi-lo)*rng.Float64())
		}
	}
}
