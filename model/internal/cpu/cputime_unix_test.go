//go:build unix

package cpu

import "syscall"

// processCPUSeconds returns the user+system CPU time of the process, so
// that benchmarks can report work per CPU-second, which depends far less
// on other load on a shared machine than work per wall-clock second.
func processCPUSeconds() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + float64(ru.Utime.Usec+ru.Stime.Usec)/1e6
}
