//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// activationAVX2 selects the AVX2/FMA loops of activation_amd64.s for ELU
// and the (scaled) sigmoid; the tests switch it off to check the Go loops.
var activationAVX2 = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// eluAVX2 is eluGo over len(dst)/8·8 values, 8 at a time, with the same
// exponential (fused multiply-adds round once where the Go loop rounds
// twice). len(src) must be at least len(dst).
//
//go:noescape
func eluAVX2(dst, src []float32)

// sigmoidScaleAVX2 is sigmoidScaleGo over len(dst)/8·8 values, 8 at a
// time. len(src) must be at least len(dst).
//
//go:noescape
func sigmoidScaleAVX2(dst, src []float32, scale float32)

// eluBackwardAVX2 is eluBackwardGo over len(dx)/8·8 values, 8 at a time.
// len(dy) and len(y) must be at least len(dx).
//
//go:noescape
func eluBackwardAVX2(dx, dy, y []float32)
