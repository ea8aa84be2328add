package cpu

// AddBias writes src plus bias[c] into every element of channel c of dst,
// for NCHW tensors of shape (n, c, h, w). dst may be src (in place);
// otherwise they must not overlap. The input gradient of a bias add is the
// upstream gradient itself; the bias gradient is BiasBackward. AddBias does
// not allocate in steady state. It panics if a dimension is not positive,
// len(bias) != c, or len(dst) or len(src) != n·c·h·w.
func AddBias(dst, src, bias []float32, n, c, h, w int) {
	opCheckShape("AddBias", n, c, h, w)
	opCheckLen("AddBias", "bias", bias, c)
	opCheckLen("AddBias", "dst", dst, n*c*h*w)
	opCheckLen("AddBias", "src", src, n*c*h*w)
	t := opStart(addBiasPlanes)
	t.dst, t.a, t.b, t.c, t.h, t.w = dst, src, bias, c, h, w
	opRun(t, n*c, 8*h*w)
}

// addBiasPlanes handles the planes (n, c) with lo <= n·C+c < hi.
func addBiasPlanes(t *opTask, lo, hi int) {
	hw := t.h * t.w
	for p := lo; p < hi; p++ {
		b := t.b[p%t.c]
		d := t.dst[p*hw : (p+1)*hw]
		s := t.a[p*hw : (p+1)*hw]
		s = s[:len(d)]
		for i, v := range s {
			d[i] = v + b
		}
	}
}

// BiasBackward writes into dbias the gradient of a per-channel bias given
// the upstream gradient dy of shape (n, c, h, w): dbias[c] is the sum of dy
// over n, h and w. It overwrites dbias. Blocks of biasBlock values are
// summed in float32 with four partial sums and the blocks are added in
// float64, so the result stays accurate for large planes. BiasBackward does not allocate in steady
// state. It panics if a dimension is not positive, len(dbias) != c or
// len(dy) != n·c·h·w.
func BiasBackward(dbias, dy []float32, n, c, h, w int) {
	opCheckShape("BiasBackward", n, c, h, w)
	opCheckLen("BiasBackward", "dbias", dbias, c)
	opCheckLen("BiasBackward", "dy", dy, n*c*h*w)
	t := opStart(biasBackwardChannels)
	t.dst, t.a, t.n, t.c, t.h, t.w = dbias, dy, n, c, h, w
	opRun(t, c, 4*n*h*w)
}

// biasBlock is the length of the runs summed in float32 by BiasBackward.
const biasBlock = 256

// biasBackwardChannels sums the channels lo <= c < hi.
func biasBackwardChannels(t *opTask, lo, hi int) {
	hw := t.h * t.w
	for ch := lo; ch < hi; ch++ {
		var total float64
		for n := 0; n < t.n; n++ {
			plane := t.a[(n*t.c+ch)*hw : (n*t.c+ch+1)*hw]
			for len(plane) > 0 {
				k := min(len(plane), biasBlock)
				total += float64(sum32(plane[:k]))
				plane = plane[k:]
			}
		}
		t.dst[ch] = float32(total)
	}
}

// sum32 returns the sum of s with four interleaved partial sums.
func sum32(s []float32) float32 {
	var a0, a1, a2, a3 float32
	for len(s) >= 4 {
		a0 += s[0]
		a1 += s[1]
		a2 += s[2]
		a3 += s[3]
		s = s[4:]
	}
	for _, v := range s {
		a0 += v
	}
	return (a0 + a1) + (a2 + a3)
}
