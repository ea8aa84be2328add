// Package data serves data sets (package dataset) to training and
// evaluation as resized, optionally augmented batches: LoadSample resizes one
// pair, Loader batches an epoch with prefetching, Split holds out a
// validation set, Augment perturbs samples.
//
// The folder layout, the pair type and the reading of files belong to
// package dataset; this package never reads a path itself.
//
// # Conventions
//
//   - Images are planar.Image values, NCHW float32, RGB in [0, 1].
//   - Disparity ground truth is converted to the project's unit, a positive
//     fraction of the image width: a value d (pixels at the stored width
//     W0) becomes d/W0, which equals d·(W/W0) pixels at the resized width W
//     divided by W. A value of 0 marks a pixel without ground truth (the
//     invalid pixels of dataset.Record).
//   - Depth ground truth is in metres; 0 marks a pixel without ground truth.
//   - Occlusion maps hold the stored grey level scaled to [0, 1].
//   - Size: Options.Width and Height default to the pairs' stored size.
//   - Resizing: images with Catmull-Rom (planar.Resampler: the filter of
//     golang.org/x/image/draw, bit for bit, which widens the kernel when
//     shrinking, so downscaling is antialiased);
//     ground truth with nearest-neighbour sampling at pixel centres, so an
//     invalid pixel never bleeds into a valid one and no value is invented
//     across a depth edge.
//   - Randomness: shuffling, the train/validation split and augmentation
//     draw from PCG generators seeded from Options.Seed, the epoch and the
//     position in the epoch, so a run is reproducible whatever the number
//     of prefetching goroutines.
//   - Horizontal flip swaps the views: the mirrored right image becomes the
//     left image and the mirrored left image the right one, and the truth
//     maps follow (mirrored right disparity becomes the left disparity), so
//     disparities stay positive with the signs of package warp; likewise
//     the occlusion maps swap. Depth exists only for the original left
//     view, so a flipped sample has none (zeros in a batch, Batch.Flipped
//     set).
//
// Errors start with "data: ".
package data
