// Package synth renders rectified stereo pairs of procedurally generated
// scenes with exact ground truth: disparity of both views, metric depth of
// the left view and occlusion masks. It is the project's demo, training and
// benchmark data; it uses no external assets.
//
// The styles (see Style): a greenhouse aisle seen from a small rover, a
// storage room with shelving seen by a different rig, an orchard alley seen
// from a ground robot and an industrial hall seen from its aisle or from
// above a workbench; the last two span depths from 0.3 m to about 30 m. A
// pair is fixed by (style, seed, index, image size, samples, variation):
// Generate(style, seed, i, opt) returns the same pair whatever else is
// generated, in any order and on any number of goroutines.
//
// Variation (Options.Vary). Greenhouse and storage pairs are rendered as
// they always were unless asked; the other styles are varied by default. A
// varied pair draws a Capture of its own: the rig's field of view (55° to
// 95°) and baseline (0.04 to 0.16 m, capped so that the disparity at the
// style's minimum depth stays below MaxVariedDisparity, 0.28 of the width),
// material hues, saturation, texture scales and now and then a random
// pattern, the light, the exposure and white balance, a Gaussian blur,
// sensor noise, a gain difference of up to ±6 % between the cameras and a
// vertical misalignment of up to ±½ pixel of the right camera. The scene
// geometry is the unvaried pair's. None of this changes the ground truth;
// blur, like anti-aliasing, mixes colours across depth edges while the truth
// stays that of the surface under the pixel centre.
//
// Drives (Drive, GenerateFrame, WriteDrive) are sequences: one rig moves
// along a continuous path through the scene of each leg in turn (for
// example a greenhouse leg, then a storage leg), a frame at a time, with
// the same exact truth per frame; the scene changes between the last frame
// of one leg and the first of the next. A frame depends only on (drive,
// frame, size, samples, variation). A varied drive keeps one capture (rig,
// exposure, blur, misalignment) for all its frames and draws the noise per
// frame. WriteDrive writes the frames in the data-set layout with one
// rig.json, NAME = PairName(frame).
//
// Conventions:
//
//   - Rig. Pinhole and rectified: the right camera sits Rig.Baseline metres
//     along the left camera's x axis with the same orientation, both share
//     the principal point (DeltaCx = 0), pixels are square (Fy = Fx)
//     and the principal point is the image centre ((W−1)/2, (H−1)/2). Each
//     style fixes its horizontal field of view, so Fx scales with the
//     width; a varied pair has a rig of its own (Pair.Rig, Pair.Capture).
//     Camera frames have x right, y down, z forward; the world has Y up.
//   - Vertical misalignment. In a varied pair the right camera's principal
//     point sits Capture.RowShift pixels below the left's (|RowShift| ≤
//     ½); the rig describes the left camera. The truth keeps its meaning
//     at each view's own pixel centres: the point under left pixel (x, y)
//     has disparity d = Fx·Baseline/Z and appears in the right image at
//     (x − d, y + RowShift), not on row y. The disparity stays the
//     horizontal offset a matcher of rectified pairs estimates; the row
//     offset is the residual error of a real rectification.
//   - Pixel centres sit at integer coordinates 0 … W−1 (as in packages
//     planar and warp).
//   - Ground truth is exact and taken at pixel centres: the ray through the
//     centre of pixel (x, y) meets the nearest surface at depth Z (camera z,
//     metres), and the disparity is Fx·Baseline/Z pixels. In memory
//     (Pair) disparities are a fraction of the width, as package warp wants
//     them; files hold pixels.
//   - Colour is anti-aliased, so it is not a point sample: away from
//     silhouettes a pixel shows its centre point with textures pre-filtered
//     to the pixel's footprint; near silhouettes and creases it averages
//     Samples×Samples rays. A pixel on a depth edge therefore mixes the
//     colours of both surfaces while its ground truth belongs to the surface
//     under its centre.
//   - Colour is view-independent (before a varied pair's camera effects,
//     which differ between the views by design): textures are functions of surface
//     coordinates in metres, shading is Lambertian (ambient plus one distant
//     light, no highlights, no shadows), and the texture footprint is
//     measured from the midpoint of the two cameras. A surface point has the
//     same colour in both views up to anti-aliasing and 8-bit rounding.
//   - Visibility. A left pixel is visible in the right view if its surface
//     point projects inside the right image, at x − d with 0 ≤ x − d ≤ W−1
//     (the range in which warp's validity mask is 1), and the right camera's
//     ray through that point meets nothing nearer (the ray is cast; no depth
//     map is interpolated). Likewise for the right view at x + d. Only
//     columns are tested: under vertical misalignment the point's row
//     y ± RowShift may lie up to ½ pixel outside the image, inside the
//     footprint of its edge row. In memory a
//     visibility mask holds 1 for visible (the module's mask convention);
//     the occlusion files hold 255 for not visible.
//   - A ray that meets nothing (impossible in the built-in styles, which are
//     closed rooms) gives black, disparity 0, depth 0 and not visible.
//
// Data-set files (WriteDataset, WriteDatasetContext, which stops when its
// context ends, and Pair.Save write them through package dataset, which
// owns the layout and reads it back), NAME =
// PairName(index), six digits:
//
//	DIR/rig.json                    the rig (depth.SaveRig), unvaried pairs
//	DIR/rigs/NAME.json              the pair's own rig, varied pairs (no rig.json then)
//	DIR/left/NAME.png               8-bit RGB
//	DIR/right/NAME.png              8-bit RGB
//	DIR/truth/disp_left/NAME.pfm    left disparity, pixels, float32 PFM
//	DIR/truth/disp_right/NAME.pfm   right disparity, pixels, float32 PFM
//	DIR/truth/depth_left/NAME.pfm   left depth Z, metres, float32 PFM
//	DIR/truth/occ_left/NAME.png     8-bit gray, 255 = not visible in the right view
//	DIR/truth/occ_right/NAME.png    8-bit gray, 255 = not visible in the left view
//
// A rig owner's own recording uses the same rig.json, left/ and right/
// without truth/. Every file is written atomically (temporary file in the
// same folder, synced, renamed).
//
// Determinism. Random choices come from math/rand/v2's PCG seeded with
// (seed, index, style), with streams of their own for a varied pair's
// capture and for each view's noise; textures hash integer lattice points; nothing
// depends on map order or goroutine scheduling. The output is byte-identical
// across runs and across machines of one architecture with one Go release.
// The residual risk across architectures is floating-point contraction: Go
// may fuse x*y+z into one FMA instruction on arm64, ppc64, s390x, riscv64
// and amd64 with GOAMD64=v3, which can change the last bit of a float64 and
// so, rarely, an 8-bit colour, the last bit of a float32 map value, or which
// of two surfaces a ray exactly on an edge hits. Built with GOAMD64=v3 (the
// compiler then emits about 160 fused multiply-adds in this package)
// TestGolden, which compares against the committed testdata/synth files,
// still passes; on other architectures it is the check that would show a
// difference.
//
// Errors start with "synth: ". Nothing panics on options or data.
package synth
