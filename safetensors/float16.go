package safetensors

import "math"

// Float16Bits returns the IEEE 754 binary16 encoding of f, rounded to
// nearest with ties to even. Values beyond the largest finite half (65504)
// that round up become ±Inf, values below half the smallest subnormal
// (2^−25) become ±0, and NaN stays NaN (quiet, with the top payload bits
// kept).
func Float16Bits(f float32) uint16 {
	b := math.Float32bits(f)
	sign := uint16(b>>16) & 0x8000
	exp := int(b>>23) & 0xff
	man := b & 0x7fffff

	if exp == 0xff { // Inf or NaN
		if man == 0 {
			return sign | 0x7c00
		}
		return sign | 0x7e00 | uint16(man>>13)
	}
	// Unbiased exponent; binary16 normals have e in [−14, 15].
	e := exp - 127
	if e > 15 {
		return sign | 0x7c00
	}
	if e >= -14 {
		// Normal: keep 10 of the 23 fraction bits and round the other 13.
		h := uint32(e+15)<<10 | man>>13
		rest := man & 0x1fff
		if rest > 0x1000 || (rest == 0x1000 && h&1 == 1) {
			h++ // may carry into the exponent, up to Inf: still correct
		}
		return sign | uint16(h)
	}
	if e < -25 {
		return sign // below 2^−25, half the smallest subnormal
	}
	// Subnormal half: the value is m·2^−24 with m < 1024. The float32 value
	// is full·2^(e−23), that is full·2^(e+1) units of 2^−24, and e+1 ≤ −14.
	full := 0x800000 | man
	shift := uint(-(e + 1))
	m := full >> shift
	rest := full & (1<<shift - 1)
	half := uint32(1) << (shift - 1)
	if rest > half || (rest == half && m&1 == 1) {
		m++ // may become 0x400, the smallest normal: still correct
	}
	return sign | uint16(m)
}

// Float16From returns the float32 value of the binary16 encoding h. Every
// half value is exactly representable as a float32.
func Float16From(h uint16) float32 {
	sign := uint32(h&0x8000) << 16
	exp := uint32(h>>10) & 0x1f
	man := uint32(h & 0x3ff)
	switch {
	case exp == 0x1f:
		return math.Float32frombits(sign | 0x7f800000 | man<<13)
	case exp != 0:
		return math.Float32frombits(sign | (exp+112)<<23 | man<<13)
	case man == 0:
		return math.Float32frombits(sign)
	}
	// Subnormal: normalise.
	e := uint32(113)
	for man&0x400 == 0 {
		man <<= 1
		e--
	}
	return math.Float32frombits(sign | e<<23 | (man&0x3ff)<<13)
}
