// Package loss holds the self-supervised stereo loss terms, each as a
// plain-Go kernel that returns its value and its gradient with respect to
// its inputs: SSIM (ssim.go), the photometric appearance term
// (appearance.go), edge-aware disparity smoothness (smoothness.go),
// left-right disparity consistency (consistency.go), their multi-scale
// combination (objective.go) with a 2×2 area-averaging image pyramid
// (pyramid.go), a finite-difference gradient checker (gradcheck.go), and
// checked entry points on *planar.Image (checked.go).
//
// Conventions:
//
//   - Layout is NCHW float32, contiguous (see package planar). Images have
//     shape (N, C, H, W); disparities and validity masks have N*H*W values.
//     Shape is warp.Shape, so one value describes a batch for both packages.
//   - Images hold values in [0, 1]; SSIM's data range L is 1 unless a
//     kernel's DataRange says otherwise.
//   - Disparity is positive and measured as a fraction of the image width;
//     the sign and the pixel-centre convention are those of package warp,
//     whose Forward and Backward are the only sampling code used here.
//   - Masks hold 1 for a valid pixel and 0 for an invalid one. A mask is
//     treated as a constant: no gradient flows through it.
//   - Scalar terms average over the whole batch (not per image, then over
//     images), in float64, and return float64.
//   - The subgradient of |v| at v = 0 is taken as 0.
//   - Options: a nil *ObjectiveOptions means the defaults and so does each
//     zero field; TermOff switches a weight off.
//
// Two levels of API. The kernels (SSIMKernel, AppearanceKernel,
// SmoothnessKernel, ConsistencyKernel, Objective) work on caller-owned
// slices plus a Shape; each is a reusable workspace whose buffers grow on
// first use and are reused afterwards, so calls do not allocate in steady
// state. A kernel's zero value is ready to use; one kernel must not be used
// by two goroutines at once. Kernels write gradients into the buffers they
// are given, overwriting them (never accumulating); a nil gradient buffer
// means that gradient is not wanted and is skipped. Scalar kernels return
// the gradient for an upstream gradient of 1, so a caller (such as an
// automatic-differentiation operator) multiplies by its upstream value.
// Kernels panic only on a programmer's misuse: slice lengths that disagree
// with the Shape, or a non-positive Shape. They never panic on values: NaN
// and Inf propagate into the result.
//
// The checked API (SSIM, Appearance, Smoothness, Consistency, EvalObjective,
// Pyramid) takes *planar.Image values and returns an error whose text
// starts with "loss: " and names the problem (nil or empty images,
// mismatched shapes, wrong channel counts, NaN or Inf values).
package loss
