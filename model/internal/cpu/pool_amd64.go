//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// blocksAVX2 selects the AVX2 loops of pool_amd64.s for the 2×2 block sums
// and spreads behind nearest upsampling; the tests
// switch it off to check the Go loops.
var blocksAVX2 = cpu.X86.HasAVX2

// sumBlocks2x2AVX2 is sumBlocks2x2 for len(g) a multiple of 8, 8 at a
// time, in the same order of additions. The rows need 2·len(g) values.
//
//go:noescape
func sumBlocks2x2AVX2(g, r0, r1 []float32, scale float32)

// spreadBlocks2x2AVX2 is spreadBlocks2x2 for len(v) a multiple of 8. The
// rows need 2·len(v) values.
//
//go:noescape
func spreadBlocks2x2AVX2(r0, r1, v []float32, scale float32)
