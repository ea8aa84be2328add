package depth

import (
	"errors"
	"fmt"
	"math"
	"slices"
)

// ErrNoValidPixels is returned (wrapped) by the metric functions when no
// pixel is valid in both the estimate and the ground truth.
var ErrNoValidPixels = errors.New("depth: no pixel is valid in both the estimate and the ground truth")

// DepthOptions selects the pixels and the scaling for DepthErrors. A nil
// *DepthOptions means the zero value: no median scaling, no depth limits.
type DepthOptions struct {
	// MedianScale multiplies every estimate by median(z)/median(ẑ), the
	// medians taken over the counted pixels, before the limits are applied.
	// This removes the unknown scale of an estimate that is only defined up
	// to scale (common practice). Default false.
	MedianScale bool
	// MinDepth, if positive, counts only pixels whose ground truth exceeds
	// it and raises estimates below it to it. Default 0: no lower limit.
	MinDepth float64
	// MaxDepth, if positive, is the depth cap: only pixels whose ground truth
	// is below it count, and estimates above it are lowered to it.
	// Default 0: no cap.
	MaxDepth float64
}

// DepthMetrics holds the depth error measures standard in single-image
// depth estimation (common practice; as listed by Eigen, Puhrsch and
// Fergus, "Depth Map Prediction from a Single Image using a Multi-Scale
// Deep Network", NIPS 2014, section 4). Over the N counted pixels, with
// estimate ẑ and ground truth z (both in metres):
//
//	AbsRel  = (1/N) Σ |ẑ − z| / z
//	SqRel   = (1/N) Σ (ẑ − z)² / z
//	RMSE    = √((1/N) Σ (ẑ − z)²)
//	RMSELog = √((1/N) Σ (ln ẑ − ln z)²)
//	Delta1  = (1/N) #{ max(ẑ/z, z/ẑ) < 1.25 }
//	Delta2  = (1/N) #{ max(ẑ/z, z/ẑ) < 1.25² }
//	Delta3  = (1/N) #{ max(ẑ/z, z/ẑ) < 1.25³ }
//
// The first four are errors (lower is better); the δ measures are fractions
// in [0, 1] (higher is better).
type DepthMetrics struct {
	N     int     // pixels counted: valid in both maps and inside the limits
	Scale float64 // factor applied to the estimate (1 without median scaling)

	AbsRel, SqRel, RMSE, RMSELog float64
	Delta1, Delta2, Delta3       float64
}

// DisparityMetrics holds disparity error measures over the N pixels valid in
// both maps, with estimate d̂ and ground truth d in pixels:
//
//	EPE  = (1/N) Σ |d̂ − d|               (end-point error, pixels)
//	BadK = (1/N) #{ |d̂ − d| > K pixels }  for K = 1, 2, 3
//
// The bad-pixel rate is the one defined by Scharstein & Szeliski (IJCV 2002)
// with error threshold K; it is reported as a fraction in [0, 1].
type DisparityMetrics struct {
	N                int
	EPE              float64
	Bad1, Bad2, Bad3 float64
}

// checkPair validates an estimate and ground-truth map for scoring.
func checkPair(est, gt *Map) error {
	if err := est.Check("estimate"); err != nil {
		return err
	}
	if err := gt.Check("ground truth"); err != nil {
		return err
	}
	if est.Rect != gt.Rect {
		return fmt.Errorf("depth: estimate bounds %v differ from ground-truth bounds %v", est.Rect, gt.Rect)
	}
	return nil
}

// pairs calls f for every pixel valid in both maps, which checkPair has
// accepted.
func pairs(est, gt *Map, f func(e, g float64)) {
	w := est.Rect.Dx()
	for y := 0; y < est.Rect.Dy(); y++ {
		ep, em := est.Pix[y*est.Stride:y*est.Stride+w], est.Mask[y*est.Stride:y*est.Stride+w]
		gp, gm := gt.Pix[y*gt.Stride:y*gt.Stride+w], gt.Mask[y*gt.Stride:y*gt.Stride+w]
		for x := range ep {
			if em[x] != 0 && gm[x] != 0 {
				f(float64(ep[x]), float64(gp[x]))
			}
		}
	}
}

// DepthErrors scores a depth estimate against ground truth with the measures
// of DepthMetrics. Only pixels valid in both maps count, further restricted
// by opt (see DepthOptions); the order is: select the pixels, compute and
// apply the median scale, clamp the estimates to the limits, score. The maps
// must have equal bounds and only positive, finite valid values. It returns
// an error wrapping ErrNoValidPixels if no pixel counts.
func DepthErrors(est, gt *Depth, opt *DepthOptions) (DepthMetrics, error) {
	if est == nil || gt == nil {
		return DepthMetrics{}, errors.New("depth: DepthErrors: nil map")
	}
	if err := checkPair(&est.Map, &gt.Map); err != nil {
		return DepthMetrics{}, err
	}
	var o DepthOptions
	if opt != nil {
		o = *opt
	}
	if math.IsNaN(o.MinDepth) || math.IsNaN(o.MaxDepth) || o.MinDepth < 0 || o.MaxDepth < 0 ||
		(o.MaxDepth > 0 && o.MaxDepth <= o.MinDepth) || math.IsInf(o.MinDepth, 0) {
		return DepthMetrics{}, fmt.Errorf("depth: DepthErrors: limits [%v, %v] are invalid", o.MinDepth, o.MaxDepth)
	}
	n0 := est.Rect.Dx() * est.Rect.Dy()
	es, gs := make([]float64, 0, n0), make([]float64, 0, n0)
	pairs(&est.Map, &gt.Map, func(e, g float64) {
		if e <= 0 || g <= 0 || (o.MinDepth > 0 && g <= o.MinDepth) || (o.MaxDepth > 0 && g >= o.MaxDepth) {
			return
		}
		es = append(es, e)
		gs = append(gs, g)
	})
	m := DepthMetrics{N: len(es), Scale: 1}
	if m.N == 0 {
		return m, fmt.Errorf("%w", ErrNoValidPixels)
	}
	if o.MedianScale {
		m.Scale = median(slices.Clone(gs)) / median(slices.Clone(es))
	}
	var absRel, sqRel, sq, sqLog float64
	var d1, d2, d3 int
	for i, e := range es {
		g := gs[i]
		e *= m.Scale
		if o.MinDepth > 0 && e < o.MinDepth {
			e = o.MinDepth
		}
		if o.MaxDepth > 0 && e > o.MaxDepth {
			e = o.MaxDepth
		}
		diff := e - g
		absRel += math.Abs(diff) / g
		sqRel += diff * diff / g
		sq += diff * diff
		l := math.Log(e) - math.Log(g)
		sqLog += l * l
		ratio := math.Max(e/g, g/e)
		if ratio < 1.25 {
			d1++
		}
		if ratio < 1.25*1.25 {
			d2++
		}
		if ratio < 1.25*1.25*1.25 {
			d3++
		}
	}
	n := float64(m.N)
	m.AbsRel = absRel / n
	m.SqRel = sqRel / n
	m.RMSE = math.Sqrt(sq / n)
	m.RMSELog = math.Sqrt(sqLog / n)
	m.Delta1 = float64(d1) / n
	m.Delta2 = float64(d2) / n
	m.Delta3 = float64(d3) / n
	return m, nil
}

// median returns the median of v (the mean of the two middle values for an
// even count). It reorders v: pass a copy.
func median(v []float64) float64 {
	n := len(v)
	hi := selectNth(v, n/2)
	if n%2 == 1 {
		return hi
	}
	// After selection every element before n/2 is ≤ v[n/2]; the lower middle
	// value is the largest of them.
	return 0.5 * (slices.Max(v[:n/2]) + hi)
}

// selectNth reorders v so that v[k] is the value a sort would put there,
// with no larger value before it and no smaller one after it, and returns
// v[k] (Hoare's selection, median-of-three pivots; expected linear time).
func selectNth(v []float64, k int) float64 {
	lo, hi := 0, len(v)-1
	for lo < hi {
		mid := lo + (hi-lo)/2
		if v[mid] < v[lo] {
			v[mid], v[lo] = v[lo], v[mid]
		}
		if v[hi] < v[lo] {
			v[hi], v[lo] = v[lo], v[hi]
		}
		if v[hi] < v[mid] {
			v[hi], v[mid] = v[mid], v[hi]
		}
		pivot := v[mid]
		i, j := lo, hi
		for i <= j {
			for v[i] < pivot {
				i++
			}
			for v[j] > pivot {
				j--
			}
			if i <= j {
				v[i], v[j] = v[j], v[i]
				i++
				j--
			}
		}
		switch {
		case k <= j:
			hi = j
		case k >= i:
			lo = i
		default:
			return v[k]
		}
	}
	return v[k]
}

// DisparityErrors scores a disparity estimate against ground truth, both in
// pixels at the same resolution, with the measures of DisparityMetrics. Only
// pixels valid in both maps count. The maps must have equal bounds. It
// returns an error wrapping ErrNoValidPixels if no pixel counts.
func DisparityErrors(est, gt *Disparity) (DisparityMetrics, error) {
	if est == nil || gt == nil {
		return DisparityMetrics{}, errors.New("depth: DisparityErrors: nil map")
	}
	if err := checkPair(&est.Map, &gt.Map); err != nil {
		return DisparityMetrics{}, err
	}
	var m DisparityMetrics
	var sum float64
	var b1, b2, b3 int
	pairs(&est.Map, &gt.Map, func(e, g float64) {
		m.N++
		a := math.Abs(e - g)
		sum += a
		if a > 1 {
			b1++
		}
		if a > 2 {
			b2++
		}
		if a > 3 {
			b3++
		}
	})
	if m.N == 0 {
		return m, fmt.Errorf("%w", ErrNoValidPixels)
	}
	n := float64(m.N)
	m.EPE = sum / n
	m.Bad1, m.Bad2, m.Bad3 = float64(b1)/n, float64(b2)/n, float64(b3)/n
	return m, nil
}

// DisparityMean averages DisparityMetrics over pairs: every pair with at
// least one counted pixel weighs the same whatever its size (the per-image
// average, common practice in stereo and depth benchmarks), and N is the
// total number of pixels. A pair with N = 0 (no pixel valid in both maps)
// has no measure to average: Add counts it as empty and leaves it out of
// the mean. The zero value is an empty mean, ready for use.
type DisparityMean struct{ m pairMean }

// Add adds the metrics of one pair.
func (a *DisparityMean) Add(m DisparityMetrics) { a.m.add(m.N, m.EPE, m.Bad1, m.Bad2, m.Bad3) }

// Pairs returns the number of pairs averaged and the number of empty pairs
// added.
func (a *DisparityMean) Pairs() (counted, empty int) { return a.m.pairs, a.m.empty }

// Mean returns the per-pair mean of the measures, with N the total number
// of pixels. Without any counted pair, N is 0 and the measures are NaN.
func (a *DisparityMean) Mean() DisparityMetrics {
	n, v := a.m.mean(4)
	return DisparityMetrics{N: n, EPE: v[0], Bad1: v[1], Bad2: v[2], Bad3: v[3]}
}

// DepthMean averages DepthMetrics over pairs with the rules of
// DisparityMean; Scale is averaged like the measures (1 without median
// scaling).
type DepthMean struct{ m pairMean }

// Add adds the metrics of one pair.
func (a *DepthMean) Add(m DepthMetrics) {
	a.m.add(m.N, m.Scale, m.AbsRel, m.SqRel, m.RMSE, m.RMSELog, m.Delta1, m.Delta2, m.Delta3)
}

// Pairs returns the number of pairs averaged and the number of empty pairs
// added.
func (a *DepthMean) Pairs() (counted, empty int) { return a.m.pairs, a.m.empty }

// Mean returns the per-pair mean of the measures and of Scale, with N the
// total number of pixels. Without any counted pair, N is 0 and the other
// fields are NaN.
func (a *DepthMean) Mean() DepthMetrics {
	n, v := a.m.mean(8)
	return DepthMetrics{N: n, Scale: v[0], AbsRel: v[1], SqRel: v[2], RMSE: v[3], RMSELog: v[4], Delta1: v[5], Delta2: v[6], Delta3: v[7]}
}

// pairMean sums the measures of the pairs with counted pixels.
type pairMean struct {
	sum          []float64
	n            int // pixels
	pairs, empty int
}

func (a *pairMean) add(n int, v ...float64) {
	if n == 0 {
		a.empty++
		return
	}
	if a.sum == nil {
		a.sum = make([]float64, len(v))
	}
	a.pairs++
	a.n += n
	for i, x := range v {
		a.sum[i] += x
	}
}

// mean returns the pixel total and the k per-pair means (NaN without a
// counted pair).
func (a *pairMean) mean(k int) (int, []float64) {
	v := make([]float64, k)
	for i := range v {
		v[i] = math.NaN()
		if a.pairs > 0 {
			v[i] = a.sum[i] / float64(a.pairs)
		}
	}
	return a.n, v
}
