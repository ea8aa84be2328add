package cpu

// Procs bounds the goroutines one operator call uses, the caller's
// included: 0 or less means runtime.GOMAXPROCS(0), as the package
// functions use; n > 0 means at most n (fewer if GOMAXPROCS is smaller).
// Its methods are the package functions of the same names under that
// bound, and Conv2D.SetMaxProcs bounds a convolution plan: a caller that
// must leave cores to others (online adaptation beside inference) runs
// its kernels through them. Results are the same bits for any bound (see
// the package doc).
type Procs int
