//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

// upsampleSIMD selects the ASIMD row loops of upsample_arm64.s for the
// bilinear passes; the tests switch it off to check the Go loops.
var upsampleSIMD = cpu.ARM64.HasASIMD

// upBilinearRowSIMD writes the output columns 2j and 2j+1 for the input
// columns j = 1 … len(out)/2, 4 at a time, of the row m = ¾·a + ¼·b:
// out[2j−2] = ¾·m[j] + ¼·m[j−1] and out[2j−1] = ¾·m[j] + ¼·m[j+1].
// len(out)/2 must be a multiple of 8 and len(a), len(b) at least
// len(out)/2 + 2.
//
//go:noescape
func upBilinearRowSIMD(out, a, b []float32)

// upBilinearBackRowSIMD writes g[j−1] for the input columns j = 1 …
// len(g), 4 at a time, of upBilinearBackwardRow over the output rows r0,
// r1, ru, rd (passed from column 0). len(g) must be a multiple of 8 and the
// rows at least 2·len(g) + 4 long.
//
//go:noescape
func upBilinearBackRowSIMD(g, r0, r1, ru, rd []float32)
