package loss

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/warp"
)

// Shape is the shape (N, C, H, W) of the batch a kernel works on. It is
// warp.Shape, so the same value serves both packages.
type Shape = warp.Shape

// SSIM stability constants as fractions of the data range L:
// C1 = (K1·L)², C2 = (K2·L)² (Wang et al. 2004, IEEE TIP 13(4), eq. 7 and 9).
const (
	SSIMK1 = 0.01
	SSIMK2 = 0.03
)

// SSIMKernel computes the structural similarity (Wang et al. 2004, IEEE TIP
// 13(4), eq. 13) of two image batches, per pixel and per channel, and its
// gradient.
//
// The local statistics are taken over a 3×3 box window with population
// moments (divided by 9): μx, μy, σx² = E[x²] − μx², σy², σxy = E[xy] − μxμy,
// and
//
//	SSIM = (2μxμy + C1)(2σxy + C2) / ((μx² + μy² + C1)(σx² + σy² + C2)).
//
// Border rule: the window reflects about the edge with the edge pixel
// repeated (scipy.ndimage mode "reflect", d c b a | a b c d | d c b a). For a
// window of radius 1 this is the same as repeating the edge pixel. It was
// chosen over a valid-region map because the appearance term needs a value
// at every pixel, and because it is what scikit-image's
// structural_similarity does, so the whole map (borders included) can be
// checked against it. The box filter with this border is a symmetric linear
// map, so the backward pass uses the same filter as its own transpose.
//
// Forward stores the local statistics in the kernel; Backward uses the
// statistics of the last Forward call, which must have been made with the
// same x, y and Shape (Backward panics if the Shape differs). Use one kernel
// per SSIM evaluation whose backward pass is still to come.
type SSIMKernel struct {
	// DataRange is the dynamic range L of the images. If DataRange is 0 it
	// defaults to 1.
	DataRange float32

	shape                  Shape
	ready                  bool
	mux, muy, vx, vy, cxy  []float32 // N*C*H*W local statistics
	h0, h1, h2, h3, h4, t0 []float32 // rings of three rows; t0 four rows
}

func (k *SSIMKernel) constants() (c1, c2 float32) {
	l := k.DataRange
	if l == 0 {
		l = 1
	}
	return (SSIMK1 * l) * (SSIMK1 * l), (SSIMK2 * l) * (SSIMK2 * l)
}

// grow returns buf resliced to n values, reallocating only when its
// capacity is too small. The contents are not cleared.
func grow(buf []float32, n int) []float32 {
	if cap(buf) < n {
		return make([]float32, n)
	}
	return buf[:n]
}

// absSign returns |v| and sign(v)·w, with sign(0) = 0 (the subgradient
// of |·| at 0). It works on the bits, since the sign of a residual is
// unpredictable and a branch on it costs more than the arithmetic.
func absSign(v, w float32) (abs, sw float32) {
	b := math.Float32bits(v)
	abs = math.Float32frombits(b &^ (1 << 31))
	sw = math.Float32frombits(b&(1<<31) ^ math.Float32bits(w))
	if v == 0 {
		sw = 0
	}
	return abs, sw
}

// abs32 returns |v| by clearing the sign bit, without a branch.
func abs32(v float32) float32 {
	return math.Float32frombits(math.Float32bits(v) &^ (1 << 31))
}

func checkShape(name string, s Shape) {
	if s.N <= 0 || s.C <= 0 || s.H <= 0 || s.W <= 0 {
		panic(fmt.Sprintf("loss.%s: invalid shape %+v", name, s))
	}
}

func checkLen(name, what string, buf []float32, n int, s Shape) {
	if len(buf) != n {
		panic(fmt.Sprintf("loss.%s: %s has %d values, shape %+v needs %d", name, what, len(buf), s, n))
	}
}

func checkOptLen(name, what string, buf []float32, n int, s Shape) {
	if buf != nil {
		checkLen(name, what, buf, n, s)
	}
}

// Forward writes into dst (N*C*H*W values) the SSIM map of x and y (N*C*H*W
// values each) and keeps the local statistics for Backward. It does not
// allocate once the kernel has seen a batch of this size. It panics if a
// slice length does not match s.
func (k *SSIMKernel) Forward(dst, x, y []float32, s Shape) {
	checkShape("SSIMKernel.Forward", s)
	n := s.N * s.C * s.H * s.W
	checkLen("SSIMKernel.Forward", "dst", dst, n, s)
	checkLen("SSIMKernel.Forward", "x", x, n, s)
	checkLen("SSIMKernel.Forward", "y", y, n, s)
	k.shape = s
	k.ready = true
	k.mux, k.muy = grow(k.mux, n), grow(k.muy, n)
	k.vx, k.vy, k.cxy = grow(k.vx, n), grow(k.vy, n), grow(k.cxy, n)
	plane := s.H * s.W
	ring := 3 * s.W
	k.h0, k.h1, k.h2 = grow(k.h0, ring), grow(k.h1, ring), grow(k.h2, ring)
	k.h3, k.h4 = grow(k.h3, ring), grow(k.h4, ring)
	c1, c2 := k.constants()
	for p := 0; p < s.N*s.C; p++ {
		o := p * plane
		k.forwardPlane(dst[o:o+plane], x[o:o+plane], y[o:o+plane], o, s.H, s.W, c1, c2)
	}
}

// forwardPlane computes the statistics and the SSIM map of one plane whose
// statistics start at offset o. The horizontal sums live in a ring of three
// rows (slot r%3 holds row r), so they stay in the first-level cache.
func (k *SSIMKernel) forwardPlane(dst, x, y []float32, o, h, w int, c1, c2 float32) {
	// hrow writes the horizontal 3-tap sums of x, y, x², y², xy of row r,
	// with the edge repeated, into its ring slot, sliding the window so
	// each product is formed once.
	hrow := func(r int) {
		sl := (r % 3) * w
		xr, yr := x[r*w:(r+1)*w], y[r*w:(r+1)*w]
		hxr, hyr := k.h0[sl:sl+w], k.h1[sl:sl+w]
		hxxr, hyyr, hxyr := k.h2[sl:sl+w], k.h3[sl:sl+w], k.h4[sl:sl+w]
		xc, yc := xr[0], yr[0]
		xl, yl := xc, yc
		xxc, yyc, xyc := xc*xc, yc*yc, xc*yc
		xxl, yyl, xyl := xxc, yyc, xyc
		for i := range xr {
			xn, yn := xc, yc
			if i+1 < len(xr) {
				xn, yn = xr[i+1], yr[i+1]
			}
			xxn, yyn, xyn := xn*xn, yn*yn, xn*yn
			hxr[i] = xl + xc + xn
			hyr[i] = yl + yc + yn
			hxxr[i] = xxl + xxc + xxn
			hyyr[i] = yyl + yyc + yyn
			hxyr[i] = xyl + xyc + xyn
			xl, xc, yl, yc = xc, xn, yc, yn
			xxl, xxc, yyl, yyc, xyl, xyc = xxc, xxn, yyc, yyn, xyc, xyn
		}
	}
	hx, hy, hxx, hyy, hxy := k.h0, k.h1, k.h2, k.h3, k.h4
	const ninth = 1.0 / 9
	mux, muy := k.mux[o:o+h*w], k.muy[o:o+h*w]
	vx, vy, cxy := k.vx[o:o+h*w], k.vy[o:o+h*w], k.cxy[o:o+h*w]
	hrow(0)
	for r := 0; r < h; r++ {
		if r+1 < h {
			hrow(r + 1)
		}
		u, c, d := ringRows(r, h, w)
		out := r * w
		for i := 0; i < w; i++ {
			mx := (hx[u+i] + hx[c+i] + hx[d+i]) * ninth
			my := (hy[u+i] + hy[c+i] + hy[d+i]) * ninth
			sxx := (hxx[u+i]+hxx[c+i]+hxx[d+i])*ninth - mx*mx
			syy := (hyy[u+i]+hyy[c+i]+hyy[d+i])*ninth - my*my
			sxy := (hxy[u+i]+hxy[c+i]+hxy[d+i])*ninth - mx*my
			j := out + i
			mux[j], muy[j], vx[j], vy[j], cxy[j] = mx, my, sxx, syy, sxy
			dst[j] = (2*mx*my + c1) * (2*sxy + c2) / ((mx*mx + my*my + c1) * (sxx + syy + c2))
		}
	}
}

// Backward writes into gradX and gradY (N*C*H*W values each) the gradient
// of a scalar with respect to x and y, given gradMap, its gradient with
// respect to the SSIM map of the last Forward call. Either gradient may be
// nil to skip it. It uses the statistics kept by Forward, so x and y must be
// the slices Forward saw, unchanged. It does not allocate in steady state.
// It panics if Forward has not been called, s differs from Forward's shape,
// or a slice length does not match s.
func (k *SSIMKernel) Backward(gradX, gradY, gradMap, x, y []float32, s Shape) {
	k.backward(gradX, gradY, gradMap, x, y, s, false)
}

// backward is Backward; with acc it adds to gradX and gradY instead of
// overwriting them.
func (k *SSIMKernel) backward(gradX, gradY, gradMap, x, y []float32, s Shape, acc bool) {
	if !k.ready || s != k.shape {
		panic(fmt.Sprintf("loss.SSIMKernel.Backward: shape %+v does not match the last Forward (%+v, called: %v)", s, k.shape, k.ready))
	}
	n := s.N * s.C * s.H * s.W
	checkLen("SSIMKernel.Backward", "gradMap", gradMap, n, s)
	checkLen("SSIMKernel.Backward", "x", x, n, s)
	checkLen("SSIMKernel.Backward", "y", y, n, s)
	checkOptLen("SSIMKernel.Backward", "gradX", gradX, n, s)
	checkOptLen("SSIMKernel.Backward", "gradY", gradY, n, s)
	if gradX == nil && gradY == nil {
		return
	}
	plane := s.H * s.W
	k.t0 = grow(k.t0, 4*s.W)
	c1, c2 := k.constants()
	for p := 0; p < s.N*s.C; p++ {
		o := p * plane
		var gx, gy []float32
		if gradX != nil {
			gx = gradX[o : o+plane]
		}
		if gradY != nil {
			gy = gradY[o : o+plane]
		}
		k.backwardPlane(gx, gy, gradMap[o:o+plane], x[o:o+plane], y[o:o+plane], o, s.H, s.W, c1, c2, acc)
	}
}

// backwardPlane is forwardPlane's adjoint. The box filter is its own
// transpose, so its loops walk the same ring of rows as forwardPlane's
// (ringRows); they stay two loops, not one walk with two bodies, so that
// each inner loop is plain code over its own sums.
func (k *SSIMKernel) backwardPlane(gx, gy, g, x, y []float32, o, h, w int, c1, c2 float32, acc bool) {
	np := h * w
	mux, muy := k.mux[o:o+np], k.muy[o:o+np]
	vx, vy, cxy := k.vx[o:o+np], k.vy[o:o+np], k.cxy[o:o+np]
	hmx, hmy, hsq, hxy := k.h0, k.h1, k.h2, k.h3
	rmx, rmy, rsq, rxy := k.t0[:w], k.t0[w:2*w], k.t0[2*w:3*w], k.t0[3*w:4*w]
	// crow computes the per-pixel gradients of row r with respect to the
	// window moments μx, μy, E[x²] (= that of E[y²]) and E[xy], then their
	// horizontal 3-tap sums (the first half of the box filter's transpose,
	// which is the filter itself) into ring slot r%3.
	crow := func(r int) {
		off, sl := r*w, (r%3)*w
		for i := 0; i < w; i++ {
			j := off + i
			mx, my := mux[j], muy[j]
			a1 := 2*mx*my + c1
			a2 := 2*cxy[j] + c2
			b1 := mx*mx + my*my + c1
			b2 := vx[j] + vy[j] + c2
			inv1, inv2 := 1/b1, 1/b2
			inv := inv1 * inv2
			gj := g[j]
			gs := -gj * a1 * a2 * inv // −g·SSIM
			dA1 := gj * a2 * inv
			dA2 := gj * a1 * inv
			dB1 := gs * inv1
			dB2 := gs * inv2
			dA, dB := 2*(dA1-dA2), 2*(dB1-dB2)
			if gx != nil {
				rmx[i] = my*dA + mx*dB
			}
			rmy[i] = mx*dA + my*dB
			rsq[i] = dB2
			rxy[i] = 2 * dA2
		}
		hsum3(hsq[sl:sl+w], rsq)
		hsum3(hxy[sl:sl+w], rxy)
		if gx != nil {
			hsum3(hmx[sl:sl+w], rmx)
		}
		if gy != nil {
			hsum3(hmy[sl:sl+w], rmy)
		}
	}
	// Vertical 3-tap sums, the 1/9, and the chain rule to the pixels:
	// dL/dx = B(gμx) + 2x·B(gE[x²]) + y·B(gE[xy]), and the same for y.
	const ninth = 1.0 / 9
	crow(0)
	for r := 0; r < h; r++ {
		if r+1 < h {
			crow(r + 1)
		}
		u, c, d := ringRows(r, h, w)
		out := r * w
		for i := 0; i < w; i++ {
			sq := (hsq[u+i] + hsq[c+i] + hsq[d+i]) * ninth
			xy := (hxy[u+i] + hxy[c+i] + hxy[d+i]) * ninth
			j := out + i
			if gx != nil {
				v := (hmx[u+i]+hmx[c+i]+hmx[d+i])*ninth + 2*x[j]*sq + y[j]*xy
				if acc {
					gx[j] += v
				} else {
					gx[j] = v
				}
			}
			if gy != nil {
				v := (hmy[u+i]+hmy[c+i]+hmy[d+i])*ninth + 2*y[j]*sq + x[j]*xy
				if acc {
					gy[j] += v
				} else {
					gy[j] = v
				}
			}
		}
	}
}

// hsum3 writes into dst the 3-tap sums of src with the edge repeated.
func hsum3(dst, src []float32) {
	l, c := src[0], src[0]
	dst = dst[:len(src)]
	for i := range dst {
		n := c
		if i+1 < len(src) {
			n = src[i+1]
		}
		dst[i] = l + c + n
		l, c = c, n
	}
}

// ringRows returns the offsets, in a ring buffer of 3 rows of width w, of
// the rows above, at and below row r of h, the border row repeated at the
// edges (the forward and backward vertical 3-tap sums share it).
func ringRows(r, h, w int) (u, c, d int) {
	u, d = max(r-1, 0), min(r+1, h-1)
	return (u % 3) * w, (r % 3) * w, (d % 3) * w
}
