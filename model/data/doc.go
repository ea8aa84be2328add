// Package data reads folders of rectified stereo pairs and serves them to
// training and evaluation as resized, optionally augmented batches.
//
// # Folder layout
//
//	DIR/left/NAME.png     left image (PNG or JPEG: .png, .jpg, .jpeg)
//	DIR/right/NAME.png    right image, same NAME and size as the left one
//	DIR/rig.json          optional rig description (see depth.ReadRig)
//	DIR/truth/disp_left/NAME.pfm   optional: left disparity, pixels, PFM float32
//	DIR/truth/disp_right/NAME.pfm  optional: right disparity, pixels
//	DIR/truth/depth_left/NAME.pfm  optional: left depth, metres
//	DIR/truth/occ_left/NAME.png    optional: left occlusion map (grey levels;
//	                               package synth writes 255 where a left pixel
//	                               is not visible in the right view)
//	DIR/truth/occ_right/NAME.png   optional: the right view's occlusion map
//
// Files with other extensions and names starting with "." are ignored.
// Every left image needs a right partner and every right image a left one;
// a truth folder that exists must hold a file for every pair and nothing
// else. Open reports each violation by file name; nothing is skipped
// silently. Images whose sizes disagree, corrupt files and truth maps of
// the wrong size are errors naming the file.
//
// # Conventions
//
//   - Images are planar.Image values, NCHW float32, RGB in [0, 1].
//   - Disparity ground truth is converted to the project's unit, a positive
//     fraction of the image width: a PFM value d (pixels at the stored width
//     W0) becomes d/W0, which equals d·(W/W0) pixels at the resized width W
//     divided by W. A value of 0 marks a pixel without ground truth; PFM
//     values that are not positive and finite become 0.
//   - Depth ground truth is in metres; 0 marks a pixel without ground truth.
//   - Occlusion maps hold the stored grey level scaled to [0, 1].
//   - Resizing: images with Catmull-Rom (golang.org/x/image/draw, which
//     widens the kernel when shrinking, so downscaling is antialiased);
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
