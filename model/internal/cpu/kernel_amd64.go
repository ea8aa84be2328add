//go:build !purego

package cpu

import "golang.org/x/sys/cpu"

//go:generate sh -c "cd _avo && go run . -out ../kernel_amd64.s -stubs ../kernel_stubs_amd64.go -pkg cpu"

var (
	avx512Kernel = kernelInfo{
		name: "avx512", mr: 8, nr: 48, fn: kernelAVX512x8x48, ind: indirectAVX512x8x48,
		mo: 4, mk: 6, lanes: 16, dot: dotAVX512x4x6,
	}
	avx2Kernel = kernelInfo{
		name: "avx2", mr: 4, nr: 24, fn: kernelAVX2x4x24, ind: indirectAVX2x4x24,
		mo: 3, mk: 3, lanes: 8, dot: dotAVX2x3x3,
	}
)

// availableKernels lists the micro-kernels this CPU runs, best first.
// x/sys/cpu reports AVX-512 and AVX only when the OS saves their registers.
func availableKernels() []kernelInfo {
	var ks []kernelInfo
	if cpu.X86.HasAVX512F {
		ks = append(ks, avx512Kernel)
	}
	if cpu.X86.HasAVX2 && cpu.X86.HasFMA {
		ks = append(ks, avx2Kernel)
	}
	return append(ks, genericKernel)
}

func bestKernel() kernelInfo { return availableKernels()[0] }
