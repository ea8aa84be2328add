//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// upsampleSIMD selects the AVX2/FMA row loop of upsample_amd64.s for the
// bilinear forward pass; the tests switch it off to check the Go loop.
var upsampleSIMD = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// upBilinearRowSIMD writes the output columns 2j and 2j+1 for the input
// columns j = 1 … len(out)/2, 8 at a time, of the row m = ¾·a + ¼·b:
// out[2j−2] = ¾·m[j] + ¼·m[j−1] and out[2j−1] = ¾·m[j] + ¼·m[j+1].
// len(out)/2 must be a multiple of 8 and len(a), len(b) at least
// len(out)/2 + 2.
//
//go:noescape
func upBilinearRowSIMD(out, a, b []float32)

// upBilinearBackRowSIMD writes g[j−1] for the input columns j = 1 …
// len(g), 8 at a time, of upBilinearBackwardRow over the output rows r0, r1,
// ru, rd (passed from column 0). len(g) must be a multiple of 8 and the
// rows at least 2·len(g) + 4 long.
//
//go:noescape
func upBilinearBackRowSIMD(g, r0, r1, ru, rd []float32)
