//go:build !unix

package synth

func processCPU() (int64, bool) { return 0, false }
