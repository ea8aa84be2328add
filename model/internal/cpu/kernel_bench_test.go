package cpu

import (
	"testing"
)

// BenchmarkMicroKernel times one micro-kernel call on packed panels that
// sit in L1, the ceiling the GEMM driver can approach on one core.
func BenchmarkMicroKernel(b *testing.B) {
	for _, k := range availableKernels() {
		b.Run(k.name, func(b *testing.B) {
			const kc = 128
			a := make([]float32, kc*k.mr)
			bb := make([]float32, kc*k.nr)
			c := make([]float32, k.mr*k.nr)
			b.ReportAllocs()
			for range b.N {
				k.fn(kc, a, bb, c, k.nr, true)
			}
			b.ReportMetric(2*kc*float64(k.mr*k.nr)*float64(b.N)/b.Elapsed().Seconds()/1e9, "GFLOP/s")
		})
	}
}
