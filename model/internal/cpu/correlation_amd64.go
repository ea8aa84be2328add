//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// corrAVX2 selects the AVX2/FMA loops of correlation_amd64.s; the tests
// switch it off to check the Go loops.
var corrAVX2 = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// corrForwardAVX2 computes 8 columns at a time, x < nx (a multiple of 8),
// of kc ≤ 8 output rows j (o[j·ostride + x], shift k0 + j for r starting at
// shift k0): scale · Σ_{ch<c} l[ch·lstride + x] · r[ch·rstride + x − j].
// It reads r up to 7 values before r[0].
//
//go:noescape
func corrForwardAVX2(o []float32, ostride int, l []float32, lstride int, r []float32, rstride, c, nx, kc int, scale float32)

// corrBackwardAVX2 computes 8 columns at a time, x < nx (a multiple of 8),
// of 8 gradient rows j (out[j·ostride + x]): scale · Σ_{k<kn}
// g[k·gstep + x] · v[j·vstride + k·vstep + x]. vstep may be negative, so v
// may be read before v[0].
//
//go:noescape
func corrBackwardAVX2(out []float32, ostride int, g []float32, gstep int, v []float32, vstep, vstride, kn, nx int, scale float32)
