//go:build unix

package sgm

import "syscall"

// processCPU returns the CPU time (user + system) the process has used, in
// nanoseconds. Benchmarks report it per operation, since on a shared
// machine wall-clock time also counts the time other work held the core.
func processCPU() int64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return ru.Utime.Nano() + ru.Stime.Nano()
}
