// Package depth turns disparity into metric depth and back, describes the
// stereo rig that links them, scores estimates against ground truth with the
// usual error measures, and writes the files people open: 16-bit PNG depth,
// colour-mapped PNG, PFM float maps and PLY point clouds.
//
// Safety: depth estimated from images is not a safety-rated range sensor.
// Its errors grow with distance and it fails silently on glass, mirrors,
// textureless or repetitive surfaces, darkness and glare. A robot or vehicle
// that acts on it needs independent obstacle sensing and must follow its own
// safety case and the regulations that apply where it runs.
//
// Conventions:
//
//   - Units. Depth Z is in metres along the left camera's optical axis.
//     Disparity in a Disparity map is in pixels of the image size the map
//     refers to. The network and packages warp and loss express disparity as
//     a fraction f of the image width W, which is resolution-free: f·W pixels
//     at any width W (FractionToPixels, PixelsToFraction).
//   - Depth from disparity: Z = Fx·Baseline / (d_px + Δcx), with Fx and the
//     principal-point difference Δcx = cx_right − cx_left (Rig.DeltaCx) in
//     pixels at the same image width as d_px; Δcx is zero for a rig
//     rectified to a shared principal point.
//   - Image size. A rig describes images of one size; Rig.Scaled rescales
//     it to another size of the same aspect ratio (within MaxAspectChange,
//     1 %) and refuses any other, since a cropped image or another camera
//     would get wrong depth silently; Rig.Stretched rescales to any size,
//     for images that were stretched from the rig's. Every caller in this
//     module (model.Estimator, the commands) goes through this rule.
//   - Validity. A disparity that is not positive, NaN or ±Inf, or whose
//     depth would be non-positive or non-finite, becomes an invalid pixel:
//     conversions never produce a silent ±Inf. Maps carry a validity mask
//     (1 valid, 0 invalid) beside their values; the value under an invalid
//     pixel is 0 and has no meaning.
//   - Maps (Disparity, Depth, Confidence) follow the standard library's image
//     types: the value at (x, y) is Pix[(y−Rect.Min.Y)·Stride + (x−Rect.Min.X)]
//     and the mask uses the same offset. Pixel coordinates are those of the
//     full image the map refers to, so a sub-map keeps its coordinates.
//   - Pixel centres sit at integer coordinates 0 … W−1; a point at pixel
//     (x, y) and depth Z has camera coordinates X = (x−Cx)·Z/Fx,
//     Y = (y−Cy)·Z/Fy (x right, y down, z forward; common practice).
//   - PFM samples are passed row-major with the top row first and channels
//     interleaved; the reader and writer handle the format's bottom-to-top
//     rows and byte order.
//   - Errors. Functions that take data return errors whose text starts with
//     "depth: "; nothing panics on values, sizes in a file header or corrupt
//     files. Decoders bound their allocation by planar.MaxSide and planar.MaxPixels and,
//     where the format allows, by the size of their input. Save functions write
//     atomically: a temporary file in the same directory, synced, renamed.
//
// What is where:
//
//   - rig.go: Rig, its JSON file (ReadRig, LoadRig, Write, SaveRig; schema
//     version 2), Validate, CheckAspect, Scaled and Stretched for resized
//     images and Cropped for cropped ones.
//   - rectified.go: VerticalShift measures a pair's vertical misalignment
//     from row profiles, CheckRectified refuses one beyond
//     DefaultMaxRowShift (a pair that is visibly not rectified).
//   - convert.go: fraction ↔ pixels ↔ metres, for single values and maps
//     (DepthFromPixels, DisparityToDepth, DepthMapFromFraction, …).
//   - maps.go: Map, Disparity, Depth, Confidence; DisparityFromImage and
//     DepthFromImage read grey images, with fast paths for *image.Gray16
//     and *image.Gray.
//   - metrics.go, summary.go: DepthErrors (abs rel, sq rel, RMSE, RMSE log,
//     δ < 1.25ᵏ; formulas on DepthMetrics, common practice), DisparityErrors
//     (end-point error, bad-1/2/3 rates, Scharstein & Szeliski, IJCV 2002),
//     DisparityMean and DepthMean for per-pair means over a data set (empty
//     pairs counted apart), and Summary for text tables and CSV.
//   - png16.go, pfm.go, ply.go, cubehelix.go: the files people open;
//     png16text.go: the 16-bit PNG's text chunks (unit, scale, invalid
//     level, rig); invalid.go: one invalid pixel everywhere (0 in the PNG,
//     NaN in PFM, no point or a NaN point in an organised PLY cloud).
package depth
