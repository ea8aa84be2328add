package cpu

// microKernel computes the mr×nr tile c = a·b, or c += a·b when acc is
// true, from a packed mr-wide panel of A (a[k*mr+i]) and a packed nr-wide
// panel of B (b[k*nr+j]) over k steps. Row i of the tile starts at
// c[i*ldc]. Callers guarantee the slice lengths.
type microKernel func(k int, a, b, c []float32, ldc int, acc bool)

// kernelInfo names a micro-kernel and its register block.
type kernelInfo struct {
	name   string
	mr, nr int
	fn     microKernel
}

// kern is the micro-kernel in use, chosen at start from the CPU features.
var kern = bestKernel()

// genericKernel is the portable micro-kernel.
var genericKernel = kernelInfo{name: "generic", mr: 4, nr: 4, fn: kernelGeneric4x4}

// KernelName returns the name of the GEMM micro-kernel in use
// ("avx512", "avx2" or "generic").
func KernelName() string { return kern.name }

// useKernel switches the micro-kernel, for tests; it reports whether the
// named kernel is available on this machine.
func useKernel(name string) bool {
	for _, k := range availableKernels() {
		if k.name == name {
			kern = k
			return true
		}
	}
	return false
}
