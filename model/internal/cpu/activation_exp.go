package cpu

import "math"

// The activations need e^x only for x <= 0 (ELU's negative branch, and the
// sigmoid written as e^-|x| / (1 + e^-|x|) or its complement), so the
// exponential below is specialised to that half line: nothing overflows and
// the scale factor 2^k stays a normal number.
//
// Method (common practice): write x = k·ln2 + r with k = round(x/ln2) and
// |r| <= ln2/2, subtracting k·ln2 in two parts (Cody and Waite) so r is
// nearly exact; then e^r ≈ 1 + r + r²·P(r) with the degree-5 polynomial P
// of the Cephes library's expf (coefficients from memory; the tests measure
// the error against the standard library's float64 math.Exp), and
// e^x = 2^k·e^r, with 2^k built from its bits.
//
// expReduce, expPoly, expInRange and selectBits are small enough for the
// compiler to inline; the activation loops call them directly, composed as
// in expNonPos and expm1NonPos (which are too large to inline and serve the
// accuracy tests). The under-range case is masked rather than branched on.
const (
	expLog2e  = 1.44269504088896341
	expLn2Hi  = 0.693359375
	expLn2Lo  = -2.12194440e-4
	expMinArg = -87.0 // e^-87 ≈ 1.6e-38, just above the smallest normal float32

	expP0 = 1.9875691500e-4
	expP1 = 1.3981999507e-3
	expP2 = 8.3334519073e-3
	expP3 = 4.1665795894e-2
	expP4 = 1.6666665459e-1
	expP5 = 5.0000001201e-1
)

// expReduce returns s = 2^k and r = x − k·ln2, with k = round(x/ln2),
// for x in [expMinArg, 0], so that e^x = s·e^r and |r| <= ln2/2. Outside
// that range s and r are meaningless (see expInRange). k is rounded by
// adding 1.5·2^23, which leaves k in the low mantissa bits: cheaper than
// float-to-int and int-to-float conversions.
func expReduce(x float32) (s, r float32) {
	const round = 0x1.8p23
	t := x*expLog2e + round
	fk := t - round
	k := int32(math.Float32bits(t)) - 0x4B400000 // the bits of 1.5·2^23
	s = math.Float32frombits(uint32(k+127) << 23)
	return s, x - fk*expLn2Hi - fk*expLn2Lo
}

// expPoly returns r + r²·P(r) ≈ e^r − 1 for |r| <= ln2/2.
func expPoly(r float32) float32 {
	p := ((((expP0*r+expP1)*r+expP2)*r+expP3)*r+expP4)*r + expP5
	return p*r*r + r
}

// expInRange returns all ones if x >= expMinArg or x is NaN, and 0 for
// smaller x, where the exponential is taken as 0.
func expInRange(x float32) uint32 {
	m := ^uint32(0)
	if x < expMinArg {
		m = 0 // an integer select: compiled to a conditional move
	}
	return m
}

// expNonPos returns e^x for x <= 0: 0 below expMinArg, NaN for NaN.
func expNonPos(x float32) float32 {
	s, r := expReduce(x)
	q := expPoly(r)
	return math.Float32frombits(math.Float32bits(s+s*q) & expInRange(x))
}

// expm1NonPos returns e^x − 1 for x <= 0, accurate near 0 where computing
// e^x and subtracting 1 would lose the low bits: −1 below expMinArg, NaN
// for NaN.
func expm1NonPos(x float32) float32 {
	s, r := expReduce(x)
	q := expPoly(r)
	// s − 1 is exact while s >= 2^-24; below, it rounds to −1 and s·q is
	// far under half an ulp of the result.
	return selectBits(^expInRange(x), -1, s*q+(s-1))
}
