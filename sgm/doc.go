// Package sgm computes disparity from a rectified stereo pair by
// semi-global matching (H. Hirschmüller, "Stereo processing by semiglobal
// matching and mutual information", IEEE TPAMI 30(2):328–341, 2008), in
// pure Go: the classical matcher a robot can run without a network, and a
// baseline and input for the project's stereo network.
//
// The method, as built here:
//
//  1. Matching cost: the census transform (R. Zabih and J. Woodfill,
//     ECCV 1994) of each grey image over a CensusWidth × CensusHeight window, one
//     bit per neighbour (1 when darker than the centre), and the Hamming
//     distance between a left pixel's bits and the right pixel's at each
//     disparity. The cost depends only on the order of grey levels around
//     a pixel, so a gain or offset between the cameras' exposures does not
//     change it.
//  2. Aggregation along 4 (the default) or 8 straight paths (Options.Paths) with the
//     penalties P1 for a one-pixel disparity change and P2 for a larger one;
//     P2 shrinks where the grey level changes along the path
//     (Options.P2Falloff), so that disparity may jump at intensity edges.
//  3. Winner takes all over the summed path costs; a parabola through the
//     best cost and its two neighbours gives the sub-pixel disparity.
//  4. Checks that mark pixels invalid: uniqueness (the best cost must beat
//     every cost more than one pixel away by Options.Uniqueness percent), a
//     left-right check (the right view's winner, taken from the same summed
//     costs, must agree within Options.LRTolerance), and speckle removal
//     (small connected regions, Options.SpeckleSize).
//  5. Optionally, the scan-line hole fill (Options.FillHoles, FillHoles):
//     each hole takes the smaller of the nearest valid disparities to its
//     left and right, the background beside an occluding edge.
//
// API (stable):
//
//	m, err := sgm.NewMatcher(&sgm.Options{MaxDisparity: 47}) // nil: defaults
//	res, err := m.Match(ctx, left, right)                    // image.Image each
//	res.Disparity  // *depth.Disparity, left view, pixels, with validity
//	res.Confidence // *depth.Confidence, from the cost curve, valid everywhere
//	err = m.MatchInto(ctx, res, left2, right2)               // reuses res's maps: no allocation
//	n, err := sgm.FillHoles(d)  // scan-line fill of any method's disparity
//	n, err = sgm.ZeroHoles(d)   // holes become valid 0s, to score them as 0
//
// Conventions:
//
//   - Disparity is in pixels at the images' resolution, of the left view:
//     left column x matches right column x − d (the convention of package
//     depth). The search covers the integers MinDisparity … MaxDisparity;
//     MaxDisparity may come from a depth.Rig (the disparity of its MinDepth
//     at the image's width). Sub-pixel values lie within half a pixel of
//     the integer winner.
//   - Pixels whose best match falls left of the right image's first column,
//     or that fail a check, are invalid (mask 0, value 0). Disparity 0 is
//     never valid (package depth's rule), so with MinDisparity 0 a winner of
//     0 is a hole.
//   - Results have the left image's bounds; pixel (x, y) of the map is
//     pixel (x, y) of the image.
//   - Images are converted to 8-bit grey with color.GrayModel's weights.
//   - Determinism: the costs and their sums are integers and every pixel's
//     result depends only on the images and options, so the output has the
//     same bits for any GOMAXPROCS, any Options.MaxProcs and any number of
//     concurrent calls.
//   - Memory: a call holds, for width × height × levels cells (levels
//     rounded up to a multiple of 16), the matching costs (1 byte a cell)
//     and the sums of the vertical and diagonal paths (2 bytes a cell);
//     about 19 bytes a pixel (the grey and padded grey images, the
//     vertical penalties, disparity, validity and confidence, the speckle
//     labels; 4 more with MinTexture); and, for each row range running at once (at most
//     GOMAXPROCS, or Options.MaxProcs), two to four rows of sums with the horizontal paths and
//     of path vectors, and the census words of a row. With the result's maps that
//     is 3.8 bytes a cell at 370×250 with 48 levels and 3.4 at 640×480
//     with 80, on 2 goroutines (TestMemoryPerCell). Workers keep their
//     buffers for the next call.
//   - Order of work, chosen to read and write the big arrays few times:
//     per range of rows, the census and costs; per band of columns (and of
//     diagonals), the vertical paths, the first storing the sums; per range
//     of rows again, the horizontal paths into rows of scratch, two to four
//     rows advancing together so that the kernel has independent vectors
//     to work on (a path's steps depend on each other), the selection and
//     the speckle labelling of the range while the rows are in cache; the
//     speckle regions joined across ranges; and per range, the speckle
//     sweep, the hole fill and the copy into the result.
//   - Speed: the path aggregation and the winner search have AVX-512 BW
//     and AVX2 kernels, the census comparisons and the right view's winner
//     search AVX2 ones, the matching costs an AVX-512 one (VPOPCNTQ),
//     chosen at start from the CPU's features; the portable Go kernels
//     give the same bits, are used everywhere else, and are forced by the
//     build tag purego. Each call spreads rows, columns and diagonals over
//     GOMAXPROCS goroutines, or Options.MaxProcs if fewer.
//   - Errors start with "sgm: " and name the problem: a nil, empty,
//     oversized or unequal image, an option out of range, a disparity range
//     that does not fit the image. Nothing panics on data.
package sgm
