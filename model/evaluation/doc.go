// Package evaluation scores depth weights on a data set with ground truth:
// the one evaluation that training, the evaluate command and the tests
// use. It runs the graph-free model.Estimator, so it needs no training
// machinery.
//
// # What is scored
//
//   - The left view's disparity against truth/disp_left: EPE and bad-1/2/3
//     (depth.DisparityErrors), in pixels.
//   - The left view's metric depth against truth/depth_left, if every pair
//     has a rig (the set's rig.json, or the pair's own rigs/NAME.json for a
//     set of varied pairs; each pair is converted with its own rig through
//     model.Estimate.SetRig): abs rel, sq rel, RMSE, RMSE log and the δ thresholds
//     (depth.DepthErrors) in metres, without median scaling (a calibrated
//     rig gives metric depth), counting pixels whose truth lies inside the
//     pair's rig's depth range, with estimates clamped to it.
//
// # Resolution
//
// Every pair is scored at its own stored resolution, as a user of
// model.Estimator sees it: the estimator resizes the left image to the
// network's input, and its disparity back to the pair's size. EPE and
// bad-K are therefore pixels at the pair's width, whatever the network's
// input size.
//
// # Means and empty pairs
//
// A measure's mean is the per-pair mean (depth.DisparityMean,
// depth.DepthMean): each pair weighs the same, and N is the total pixel
// count. A pair with no pixel valid in both the estimate and the truth has
// N = 0 and NaN measures in its PairScore; it is listed in the Report
// (EmptyDisparity, EmptyDepth) and left out of the mean, never skipped
// silently and never an error. A mean over no counted pair is NaN.
//
// # Methods and holes
//
// Score runs weights through model.Estimator; ScoreMethod scores any
// Method, such as the semi-global matcher (SGM) or a stereo estimator, on
// both images of each pair. ScoreOptions.Holes says how the disparity
// measures count the pixels without an estimate: left out (the default;
// N is then the coverage), as disparity 0, or filled along the scan line
// (sgm.FillHoles). A report's tables should state which (Holes.String).
//
// Errors start with "evaluation: ".
package evaluation
