// Package cpu is the CPU engine behind graph-free inference and the
// training operators: matrix multiplication (SGEMM), convolution and the
// other layers of the network, all on float32.
//
// Conventions:
//
//   - Tensors are NCHW, contiguous: element (n, c, y, x) of a tensor with
//     shape (N, C, H, W) is t[((n*C+c)*H+y)*W+x].
//   - Convolution weights are OIHW (output channel, input channel, kernel
//     row, kernel column), the layout PyTorch uses, so weights interchange
//     without reordering. Bias holds one value per output channel.
//   - Matrices are row-major with an explicit leading dimension (the
//     distance between the starts of two rows, in elements).
//   - The destination comes first and is overwritten. Gradients are
//     overwritten, not accumulated, unless a function's doc says otherwise.
//   - Plans (for example Conv2D) are made once per shape and own their
//     workspaces; their methods do not allocate in steady state.
//   - Kernels over caller-owned slices panic when slice lengths disagree
//     with the shape (a programmer's error) and say so in their doc.
//     Constructors that take sizes from data return errors whose text
//     starts with "cpu: ". Values (NaN, Inf) never cause a panic; they
//     propagate as IEEE arithmetic dictates.
//   - Work is split over goroutines with ParallelFor, which uses up to
//     runtime.GOMAXPROCS(0) goroutines from a persistent pool.
//
// On amd64 the inner loops run in assembly micro-kernels (AVX-512 or AVX2
// with FMA, chosen at run time from the CPU's features). The build tag
// purego, and every other architecture, select a portable Go path that
// gives the same results up to float rounding.
package cpu
