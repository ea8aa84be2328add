// Package dataset owns the folder layout of a stereo data set: it reads
// folders of rectified pairs (Open), makes a set of one pair from explicit
// files (FromFiles), decodes a pair and its ground truth at the stored size
// (Set.Read), and writes pairs in the same layout (Create, WriteRecord). It also
// holds the bounded image decoder (LoadImage) and the folder lister
// (ImageFiles, Frames) that every other package and command uses.
//
// # Folder layout
//
//	DIR/left/NAME.png     left image (PNG or JPEG: .png, .jpg, .jpeg)
//	DIR/right/NAME.png    right image, same NAME and size as the left one
//	DIR/rig.json          optional rig description (see depth.ReadRig), for the stored size
//	DIR/rigs/NAME.json    or: each pair's own rig, for its stored size
//	DIR/truth/disp_left/NAME.pfm   optional: left disparity, pixels, PFM float32
//	DIR/truth/disp_right/NAME.pfm  optional: right disparity, pixels
//	DIR/truth/depth_left/NAME.pfm  optional: left depth, metres
//	DIR/truth/occ_left/NAME.png    optional: left occlusion map (grey levels;
//	                               255 where a left pixel is not visible in
//	                               the right view, 0 elsewhere)
//	DIR/truth/occ_right/NAME.png   optional: the right view's occlusion map
//
// Files with other extensions and names starting with "." are ignored.
// Every left image needs a right partner and every right image a left one;
// a truth folder that exists must hold a file for every pair and nothing
// else. A set has one rig for every pair (rig.json), a rig for each pair
// (rigs/, one file per pair and none of no pair), or none; a folder with
// both is refused. Open reports each violation by file name; nothing is
// skipped silently. Images whose sizes disagree, corrupt files and truth maps of
// the wrong size are errors naming the file.
//
// # Conventions
//
//   - Sizes: an image or map is refused from its header, before any pixel
//     is decoded, if a side exceeds planar.MaxSide or the area
//     planar.MaxPixels (a few header bytes may claim 60000×60000 pixels).
//   - Disparity ground truth is in pixels at the stored width, depth in
//     metres; a PFM value that is not positive and finite marks a pixel
//     without ground truth (invalid in the depth.Map). WriteRecord stores invalid
//     pixels as 0.
//   - Occlusion maps are returned as decoded: grey levels, white = hidden.
//   - Names: NAME is the file name without its extension, shared by both
//     views and the truth files of a pair; pairs are sorted by name.
//   - Writing is atomic per file (a reader never sees half a file).
//
// Errors start with "dataset: ".
package dataset
