package synth

import "math"

// hash2 mixes a lattice point and a seed into 32 well-spread bits. It uses
// only integer operations, so it gives the same value on every platform.
func hash2(x, y int32, seed uint32) uint32 {
	h := uint32(x)*0x8da6b343 ^ uint32(y)*0xd8163841 ^ seed*0xcb1ab31f
	h ^= h >> 16
	h *= 0x7feb352d
	h ^= h >> 15
	h *= 0x846ca68b
	h ^= h >> 16
	return h
}

// unit maps a hash to [0, 1).
func unit(h uint32) float64 { return float64(h>>8) * (1.0 / (1 << 24)) }

// cellIndex returns the index of the cell holding u on a grid of the given
// spacing (cell k covers [k·spacing, (k+1)·spacing)).
func cellIndex(u, spacing float64) int32 { return int32(math.Floor(u / spacing)) }

// quintic is the C2 interpolation weight 6t⁵ − 15t⁴ + 10t³.
func quintic(t float64) float64 { return t * t * t * (t*(t*6-15) + 10) }

// valueNoise is lattice value noise with unit lattice spacing and values in
// [0, 1), interpolated with the quintic weight so it is smooth (C2).
func valueNoise(x, y float64, seed uint32) float64 {
	fx, fy := math.Floor(x), math.Floor(y)
	ix, iy := int32(fx), int32(fy)
	sx, sy := quintic(x-fx), quintic(y-fy)
	v00 := unit(hash2(ix, iy, seed))
	v10 := unit(hash2(ix+1, iy, seed))
	v01 := unit(hash2(ix, iy+1, seed))
	v11 := unit(hash2(ix+1, iy+1, seed))
	return lerp(lerp(v00, v10, sx), lerp(v01, v11, sx), sy)
}

// Texture filtering. Every texture is evaluated with the footprint fp of one
// pixel on the surface (metres). A feature whose wavelength covers fewer
// than lodLow pixels is replaced by its mean; one covering more than lodHigh
// pixels is kept whole; in between it fades linearly. This keeps the
// rendered images band-limited, so that bilinear resampling by the ground
// truth disparity reproduces them (the warp check), and it is the same in
// both views because fp does not depend on the view (see footprint).
const (
	lodLow  = 2.0
	lodHigh = 4.0
)

// lodWeight returns the weight of a feature of wavelength lambda (metres)
// at footprint fp.
func lodWeight(lambda, fp float64) float64 {
	return clamp01((lambda/fp - lodLow) / (lodHigh - lodLow))
}

// fbmGain is the amplitude ratio of successive fbm octaves; above ½ it
// keeps fine detail strong enough for photometric matching.
const fbmGain = 0.65

// fbm sums octaves of value noise, the first with lattice spacing scale
// (metres), each next one at half the spacing and fbmGain times the amplitude, and
// fades octaves that are too fine for the footprint fp to their mean. The
// result lies in [0, 1] with mean about ½; the normalisation does not
// depend on fp, so distant surfaces lose detail but keep their tone.
func fbm(u, v, scale float64, octaves int, fp float64, seed uint32) float64 {
	var sum, norm float64
	amp := 1.0
	lambda := scale
	for k := 0; k < octaves; k++ {
		norm += amp
		w := lodWeight(lambda, fp)
		if w == 0 {
			sum += amp * 0.5
		} else {
			n := valueNoise(u/lambda, v/lambda, seed+uint32(k)*0x9e3779b9)
			sum += amp * (w*n + (1-w)*0.5)
		}
		amp *= fbmGain
		lambda *= 0.5
	}
	return sum / norm
}

// coverage returns the fraction of the interval [x−w/2, x+w/2] that lies in
// [a, b]: the box-filtered indicator of [a, b] at filter width w > 0.
func coverage(x, a, b, w float64) float64 {
	lo := math.Max(x-w/2, a)
	hi := math.Min(x+w/2, b)
	if hi <= lo {
		return 0
	}
	return (hi - lo) / w
}

// periodicLine returns the box-filtered indicator of lines of width lw
// centred on the multiples of period, at filter width w. When the filter
// spans most of a period it returns the mean lw/period.
func periodicLine(x, period, lw, w float64) float64 {
	mean := lw / period
	if w >= period/2 {
		return mean
	}
	d := x - period*math.Floor(x/period+0.5)
	c := coverage(d, -lw/2, lw/2, w)
	// Fade to the mean as the period shrinks towards the footprint.
	t := lodWeight(period, w)
	return t*c + (1-t)*mean
}
