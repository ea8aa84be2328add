// Package parallel runs loops over index ranges on one persistent pool of
// goroutines, shared by the CPU kernels of model/internal/cpu and the
// semi-global matcher of package sgm: For, and FreeList, which recycles the
// state of each call so that steady-state calls do not allocate; and Pool,
// the bounded set of workers (scratch memory for one call) behind
// model.Estimator and sgm.Matcher.
//
// Ranges depend on the problem's size and grain only, never on the number
// of goroutines, so that kernels which keep one partial sum per range give
// the same bits on any number of threads (see For).
package parallel
