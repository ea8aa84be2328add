// Package train trains the disparity network of package model on gorgonia
// (gorgonia.org/gorgonia v0.9.18): custom operators over the project's
// kernels, the self-supervised objective as one node, an Adam solver with
// saveable state, and a graph builder that walks model's declarative
// architecture.
//
// # Operators
//
// The graph is built from unexported operators (convolution with bias,
// ELU, the disparity head d_max·sigmoid, scaling, bilinear and nearest 2×
// upsampling, channel concatenation, the stereo correlation cost volume,
// the feature warp of package warp), each adding one node whose op calls a
// kernel of model/internal/cpu or package warp; its symbolic gradient (gorgonia's SDOp) is
// built from further ops that call the same kernel's backward. The
// objective (loss.Objective) is one scalar node whose gradients are the
// ones the loss kernels computed in the same call. No formula is
// implemented in this package, and no gorgonia node appears in its API
// except through Adam, which implements gorgonia's Solver.
//
// Conventions:
//
//   - Tensors are float32, NCHW, contiguous (see package planar); weights
//     are OIHW and biases have one value per output channel, as in package
//     model. Disparity tensors are (N, 2, H, W): channel 0 is the left
//     view's d_L, channel 1 the right view's d_R, fractions of the width
//     with the signs of package warp.
//   - Every node is named (gorgonia merges unnamed nodes that look alike),
//     and every op's Hashcode covers its kind, its layer name, its settings
//     and all shapes, so two identical-looking layers stay two nodes.
//     Gradient nodes are named after their layer: NAME.dx, NAME.dweight,
//     NAME.dbias.
//   - A convolution's forward and backward ops share one cpu.Conv2D plan
//     and its workspaces. Graphs have a fixed batch size.
//   - Buffers: each op owns its output buffer, allocates it on its first
//     run and overwrites it on every run; the TapeMachine's Reset drops its
//     registers, so ops do not implement UsePreallocDoer. gorgonia may
//     reuse a dead value's buffer in place for a later node of the same
//     run (its register allocation), so the Value of an intermediate node
//     read after RunAll is not reliable: disparities and losses are read
//     from the objective op's own copies. Parameter gradients are safe: gorgonia adds each
//     run's gradient into the parameter's own gradient buffer (so they
//     accumulate over runs until Adam.Step clears them).
//   - Errors for data start with "train: "; operators check input shapes
//     and dtypes at every run and return errors, never panic.
//
// # Training
//
// A training step: set the input image of the network and the image pair
// of the objective, run the TapeMachine, read the objective's terms, call
// Adam.Step on the parameters, Reset the machine. Session bundles those. gorgonia's own solvers skip a parameter without a
// gradient silently and hide Adam's moments; Adam here returns an error
// for a missing or non-finite gradient before changing any weight and
// exports its state for checkpoints.
//
// gorgonia's Conv2d, Upsample2D, pooling and axis reductions are not used:
// they are slow or give wrong values in v0.9.18 (see DEVELOPERS.md).
//
// # Trainer
//
// Trainer runs a whole training or fine-tuning run over a Source of
// batches (NewDatasetSource serves a dataset.Set): the learning rate of
// a Schedule at every step (default 3e-4 after a linear warm-up over 2%
// of the steps, no decay unless Schedule.Milestones asks), Adam, a Progress report after every
// step (step, weighted terms, rate, steps/s and pairs/s), and checkpoints
// (SaveCheckpoint, LoadCheckpoint; safetensors with the weights, Adam's
// moments and the data position) every TrainerOptions.CheckpointEvery steps, at
// the end, and when the context is cancelled. Trainer.Resume continues a
// checkpointed run; with the same options and data the result is the
// uninterrupted run's, bit for bit on any number of threads (see
// Determinism below).
//
// Job is a Trainer on files, as the finetune command runs it: Files (the
// weights, the checkpoint, the CSV log of StepLog and its loss-curve PNG)
// are probed and their free space checked before step 1, the run starts
// from the embedded weights, a weights file, a checkpoint or scratch
// (Start), and the trained weights are saved with their provenance
// (RunInfo), also when the run is interrupted.
//
// Safety: a step whose batch, loss or gradient holds NaN or Inf is skipped
// before any weight or moment changes, counted, and reported through
// Progress; it never reaches a checkpoint. A disparity map whose spatial
// coefficient of variation stays below CollapseOptions.Spread for
// CollapseOptions.Steps consecutive steps is reported as a collapse
// (Progress.Collapsed): the network has settled on a near-constant
// disparity, which too large a learning rate causes.
//
// Scales: the coarse disparities are not upsampled to full resolution
// before the loss. Each scale is compared at its own resolution with the
// images of a 2×2 area-averaging pyramid (loss.Downsample2), so the loss
// of the four scales costs about 1 + 1/4 + 1/16 + 1/64 ≈ 1.33 times the
// finest one, against 4 times with upsampling; on a CPU the loss is a
// sizeable part of a step. Upsampling is known to reduce texture-copy
// artefacts at the coarse scales (common practice in recent
// self-supervised depth work); we keep the pyramid for its cost, and the
// finest scale, which inference uses, is compared at full resolution
// either way.
//
// Determinism: the data order and augmentation depend only on the seed,
// the epoch and the position (package data), and the Trainer draws no
// random numbers. The kernels of model/internal/cpu give the same bits for
// any GOMAXPROCS, so two runs with the same inputs, and a resumed run, are
// bit for bit identical on one machine. Different CPU micro-kernels
// (AVX-512, AVX2, purego) round differently, so a run resumed on a machine
// that selects another kernel continues, but not bit for bit.
//
// Scoring weights on a data set with ground truth, for before/after figures
// of a fine-tuning run, is package model/evaluation (no gorgonia).
package train
