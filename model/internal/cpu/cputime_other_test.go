//go:build !unix

package cpu

func processCPUSeconds() float64 { return 0 }
