// Package adapt keeps a running model.Estimator learning on the live
// stereo stream: self-supervised fine-tuning in the background with
// bounded cost, checked before every swap and rolled back on trouble.
//
// The caller's frame loop hands each rectified pair to Adapter.Offer,
// which never blocks: it keeps the latest pair until the adapting
// goroutine (Adapter.Run, or Adapter.Step called by hand) takes it. A
// taken pair is resized to the size the Estimator runs it at
// (Estimator.NetworkSize: aspect ratio kept, the longer side capped by
// EstimatorOptions.MaxSide), so the weights train on what they will see;
// RGB in [0, 1], Catmull-Rom as in model/data. The first pair offered sets
// the size of all. The pair is admitted to a bounded replay buffer
// unless a frame gate refuses it (see Options): too little contrast (a
// black or blown-out frame), too close to the last admitted frame (the
// robot stands still), or views that look swapped.
//
// The newest Options.HoldOut admitted frames are held back: they are
// never trained on and score every candidate. Steps draw one older frame
// at a time, uniformly with a generator seeded by Options.Seed, and run
// train.Session.Step with the existing self-supervised objective. Every
// Options.StepsPerCheck steps the candidate weights are checked, and
// swapped into the Estimator (model.Estimator.SetWeights) only if
//
//   - every weight and every loss is finite,
//   - their relative L2 distance from the starting weights,
//     ‖w − w₀‖ / ‖w₀‖ over all parameters, is within Options.MaxDrift,
//   - their mean objective on the held-out frames is at most
//     (1 + Options.Margin) times that of the weights in service and at
//     most (1 − Options.MinGain) times that of the starting weights, all
//     scored on the same frames.
//
// The comparison with the starting weights is what keeps the adapter from
// making the depth worse than the weights it started from: each swap only
// has to beat the weights then in service on the frames then held out, so
// a chain of swaps can end, on the frames seen now (a new part of the
// scene), no better than the start. A refused candidate is discarded:
// training restarts from the weights in service with a fresh solver (a
// roll-back). If at a refusal the weights in service themselves no longer
// score MinGain below the starting weights, the starting weights are put
// back in service (a fall-back, Status.Fallbacks) and training restarts
// from them. So after every check the Estimator runs either the starting
// weights or adapted weights that scored MinGain below them on the
// held-out frames at their last check. A non-finite value anywhere also
// pauses the adapter, with the reason in Status, until Resume.
//
// The check reads the self-supervised objective, not the depth error,
// which needs ground truth: weights can lower the objective a little and
// still give worse depth (see Options.MinGain), hence the gain required. The objective of
// the starting weights and of the weights in service on a held-out frame
// is computed once and kept with the frame; a check runs the candidate on
// every held-out frame and the other two on the frames new since the last
// check.
//
// Cost: one goroutine steps at most Options.StepsPerSecond times a
// second, and its kernels run on at most Options.Workers goroutines
// (default half of GOMAXPROCS, at least 1), whatever inference uses. With
// the same seed, the same weights, the same offered frames in
// the same order and the same calls, the weights are the same bits, for
// any Workers (the kernels are deterministic; see DEVELOPERS.md).
package adapt
