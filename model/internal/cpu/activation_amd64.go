//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// activationSIMD selects the AVX2/FMA loops of activation_amd64.s for ELU
// and the (scaled) sigmoid; the tests switch it off to check the Go loops.
var activationSIMD = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// eluSIMD is eluGo over len(dst)/8·8 values, 8 at a time, with the same
// exponential (fused multiply-adds round once where the Go loop rounds
// twice). len(src) must be at least len(dst).
//
//go:noescape
func eluSIMD(dst, src []float32)

// sigmoidScaleSIMD is sigmoidScaleGo over len(dst)/8·8 values, 8 at a
// time. len(src) must be at least len(dst).
//
//go:noescape
func sigmoidScaleSIMD(dst, src []float32, scale float32)

// eluBackwardSIMD is eluBackwardGo over len(dx)/8·8 values, 8 at a time.
// len(dy) and len(y) must be at least len(dx).
//
//go:noescape
func eluBackwardSIMD(dx, dy, y []float32)
