//go:build purego || !(amd64 || arm64)

package cpu

func bestKernel() kernelInfo { return genericKernel }

func availableKernels() []kernelInfo { return []kernelInfo{genericKernel} }
