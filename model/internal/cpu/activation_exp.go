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

// expSplit returns s = 2^k and q such that e^x = s·(1 + q) for x in
// [expMinArg, 0]; q = r + r²·P(r) is accurate even when e^x is close to 1.
func expSplit(x float32) (s, q float32) {
	k := int32(x*expLog2e - 0.5) // round to nearest for x <= 0
	fk := float32(k)
	r := x - fk*expLn2Hi
	r -= fk * expLn2Lo
	p := expP0*r + expP1
	p = p*r + expP2
	p = p*r + expP3
	p = p*r + expP4
	p = p*r + expP5
	q = p*r*r + r
	s = math.Float32frombits(uint32(k+127) << 23)
	return s, q
}

// expNonPos returns e^x for x <= 0: 0 below expMinArg, NaN for NaN.
func expNonPos(x float32) float32 {
	if x < expMinArg {
		return 0
	}
	s, q := expSplit(x)
	return s + s*q
}

// expm1NonPos returns e^x − 1 for x <= 0, accurate near 0 where computing
// e^x and subtracting 1 would lose the low bits: −1 below expMinArg, NaN
// for NaN.
func expm1NonPos(x float32) float32 {
	if x < expMinArg {
		return -1
	}
	s, q := expSplit(x)
	// s − 1 is exact while s >= 2^-24; below, it rounds to −1 and s·q is
	// far under half an ulp of the result.
	return s*q + (s - 1)
}
