//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

var neonKernel = kernelInfo{
	name: "neon", mr: 8, nr: 12, fn: kernelNEON8x12, ind: indirectNEON8x12,
	mo: 4, mk: 6, lanes: 4, dot: dotNEON4x6,
}

// availableKernels lists the micro-kernels this CPU runs, best first.
// ASIMD is part of every ARMv8-A core that runs Go, but a kernel may hide
// it; x/sys/cpu reads what the OS reports.
func availableKernels() []kernelInfo {
	if cpu.ARM64.HasASIMD {
		return []kernelInfo{neonKernel, genericKernel}
	}
	return []kernelInfo{genericKernel}
}

func bestKernel() kernelInfo { return availableKernels()[0] }

// kernelNEON8x12 computes one 8×12 tile; see microKernel.
//
//go:noescape
func kernelNEON8x12(k int, a, b, c []float32, ldc int, acc bool)

// indirectNEON8x12 computes one 8×12 tile; see indirectKernel.
//
//go:noescape
func indirectNEON8x12(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool)

// dotNEON4x6 accumulates one 4×6 block of dot products; see dotKernel.
//
//go:noescape
func dotNEON4x6(n int, y []float32, ldy int, x []float32, offs []int, out []float32, ldo int)
