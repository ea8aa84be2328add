package cpu

// microKernel computes the mr×nr tile c = a·b, or c += a·b when acc is
// true, from a packed mr-wide panel of A (a[k*mr+i]) and a packed nr-wide
// panel of B (b[k*nr+j]) over k steps. Row i of the tile starts at
// c[i*ldc]. Callers guarantee the slice lengths.
type microKernel func(k int, a, b, c []float32, ldc int, acc bool)

// indirectKernel is microKernel for the stride-1 convolution: row k of
// the B panel is read from b[offs[k]:], not from a packed panel.
type indirectKernel func(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool)

// dotKernel accumulates an mo×mk block of dot products of length n (a
// multiple of the kernel's lanes): out[i*ldo+j] += Σ_t y[i*ldy+t]·x[offs[j]+t].
type dotKernel func(n int, y []float32, ldy int, x []float32, offs []int, out []float32, ldo int)

// kernelInfo names a set of micro-kernels and their register blocks.
type kernelInfo struct {
	name   string
	mr, nr int
	fn     microKernel
	ind    indirectKernel
	// The dot kernel works on mo×mk blocks of sums whose length is a
	// multiple of lanes.
	mo, mk, lanes int
	dot           dotKernel
}

// kern is the micro-kernel in use, chosen at start from the CPU features.
var kern = bestKernel()

// genericKernel is the portable micro-kernel.
var genericKernel = kernelInfo{
	name: "generic", mr: 1, nr: 6, fn: kernelGeneric1x6, ind: indirectGeneric1x6,
	mo: 2, mk: 4, lanes: 4, dot: dotGeneric2x4,
}

// KernelName returns the name of the GEMM micro-kernel in use
// ("avx512", "avx2", "neon" or "generic").
func KernelName() string { return kern.name }
