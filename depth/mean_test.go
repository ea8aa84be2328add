package depth

import (
	"math"
	"testing"
)

// TestMeans: hand-computed per-pair means. Pair a counts 10 pixels, pair b
// 30; the per-pair mean of EPE 1 and 3 is 2 (a pixel-weighted mean would
// give 2.5); an empty pair is counted apart and changes nothing.
func TestMeans(t *testing.T) {
	var d DisparityMean
	if m := d.Mean(); m.N != 0 || !math.IsNaN(m.EPE) || !math.IsNaN(m.Bad3) {
		t.Errorf("empty disparity mean %+v, want N 0 and NaN", m)
	}
	d.Add(DisparityMetrics{N: 10, EPE: 1, Bad1: 0.5, Bad2: 0.25, Bad3: 0})
	d.Add(DisparityMetrics{})
	d.Add(DisparityMetrics{N: 30, EPE: 3, Bad1: 0.1, Bad2: 0.05, Bad3: 0.5})
	if got, want := d.Mean(), (DisparityMetrics{N: 40, EPE: 2, Bad1: 0.3, Bad2: 0.15, Bad3: 0.25}); got != want {
		t.Errorf("disparity mean %+v, want %+v", got, want)
	}
	if c, e := d.Pairs(); c != 2 || e != 1 {
		t.Errorf("pairs %d counted, %d empty; want 2 and 1", c, e)
	}

	var z DepthMean
	if m := z.Mean(); m.N != 0 || !math.IsNaN(m.AbsRel) || !math.IsNaN(m.Scale) {
		t.Errorf("empty depth mean %+v, want N 0 and NaN", m)
	}
	z.Add(DepthMetrics{N: 4, Scale: 1, AbsRel: 0.5, SqRel: 1, RMSE: 2, RMSELog: 0.25, Delta1: 1, Delta2: 1, Delta3: 1})
	z.Add(DepthMetrics{N: 12, Scale: 3, AbsRel: 0.25, SqRel: 3, RMSE: 4, RMSELog: 0.75, Delta1: 0, Delta2: 0.5, Delta3: 0.75})
	z.Add(DepthMetrics{Scale: 1})
	want := DepthMetrics{N: 16, Scale: 2, AbsRel: 0.375, SqRel: 2, RMSE: 3, RMSELog: 0.5, Delta1: 0.5, Delta2: 0.75, Delta3: 0.875}
	if got := z.Mean(); got != want {
		t.Errorf("depth mean %+v, want %+v", got, want)
	}
	if c, e := z.Pairs(); c != 2 || e != 1 {
		t.Errorf("pairs %d counted, %d empty; want 2 and 1", c, e)
	}
}
