// Package warp resamples images horizontally by a per-pixel disparity, with
// bilinear interpolation that is differentiable with respect to both the
// image and the disparity. It is the view-synthesis step of self-supervised
// stereo training: the right image, sampled at the left disparity, rebuilds
// the left image, and the other way round.
//
// Conventions:
//
//   - Memory layout is NCHW float32, contiguous (see package planar). Images
//     have shape (N, C, H, W); disparities and validity masks have shape
//     (N, 1, H, W) and are passed as slices of N*H*W values.
//   - Disparity is positive and measured as a fraction of the image width W:
//     a disparity d shifts by d*W pixels at any resolution.
//   - Pixel centres sit at integer coordinates: pixel x covers [x-½, x+½],
//     and the first and last pixel centres are 0 and W-1. (In PyTorch terms
//     this is grid_sample with align_corners=True.)
//   - Sign. RebuildLeft reads the right image at u = x - d*W, so a point seen
//     at column x in the left view appears at column x - d*W in the right
//     view. RebuildRight reads the left image at u = x + d*W.
//   - Bilinear weights: with i = floor(u) and a = u - i, the sample is
//     (1-a)*src[i] + a*src[i+1].
//   - Borders. Zero treats every tap outside [0, W-1] as 0 (a sample half
//     outside fades to black; one at u <= -1 or u >= W is 0). Clamp clamps u
//     to [0, W-1], so the edge pixel repeats. (PyTorch padding_mode 'zeros'
//     and 'border'.)
//   - Gradients. Bilinear sampling is piecewise linear in u, with kinks at
//     integer u. There the kernels use the one-sided derivative PyTorch 1.13
//     grid_sample uses: taps floor(u) and floor(u)+1, so at an integer u the
//     derivative is src[u+1] - src[u] (with a tap outside the row counting
//     as 0 under Zero). Under Clamp the derivative with respect to the
//     disparity is 0 wherever the clamp holds, u <= 0 or u >= W-1 included.
//   - Validity. The mask is 1 where 0 <= u <= W-1, that is where the sample
//     fell inside the source image, and 0 elsewhere, for either border mode.
//     A loss should ignore pixels whose mask is 0.
//   - Non-finite values. The low-level kernels give a NaN disparity an output
//     of 0, a mask of 0 and no gradient, and treat ±Inf as a position far
//     outside the row (mask 0; 0 under Zero, the edge pixel under Clamp;
//     no disparity gradient). They assume finite source images: a NaN or Inf
//     pixel can reach neighbouring outputs through a weight of 0. The checked
//     entry point Warp rejects non-finite disparities and images with an
//     error instead.
//   - Batches. Every image n of a batch is warped by its own disparity map n;
//     the kernels loop over N, so a batch gives the same values as N calls.
//
// Two levels of API: Forward and Backward are allocation-free kernels over
// caller-owned slices; they panic on a programmer's misuse (slice lengths
// that do not match the shape, an undefined Direction or Border, a buffer
// that aliases an input), never on values. Warp is the checked entry
// point for data: it takes planar.Image values and returns errors that name
// the problem. Backward overwrites the gradient buffers it is given; pass
// nil for a gradient that is not needed.
package warp
