//go:build !purego

package cpu

func bestKernel() kernelInfo { return genericKernel }

func availableKernels() []kernelInfo { return []kernelInfo{genericKernel} }
