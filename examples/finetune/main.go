// Command finetune trains the disparity network on a folder of rectified
// stereo pairs (the layout of package dataset), without ground truth, and
// writes the weights, a checkpoint, a CSV log and a loss-curve PNG
// (train.Job); a held-out part with ground truth is scored before and
// after (model/evaluation):
//
//	go run ./examples/finetune -data DIR -out W.safetensors
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"strings"
	"syscall"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/progress"
	"github.com/parallaxdepth/parallax/safetensors"
)

const usage = `usage: finetune -data DIR -out W.safetensors [flags]

Fine-tunes the disparity network on rectified stereo pairs from your own rig, self-supervised (no
ground truth needed), on the CPU; outputs and free space are checked before step 1. SIGINT (Ctrl-C),
SIGTERM and SIGHUP (a closed terminal) write the checkpoint and the weights so far and exit with
status 3; an unreadable pair writes the checkpoint and exits 1; continue either with -resume. Flags:
`

// exitInterrupted is the exit status of a run stopped by a signal.
const exitInterrupted = 3

// errInterrupted ends a run stopped by a signal; command.Main exits with
// its status, exitInterrupted.
var errInterrupted error = interrupted{}

type interrupted struct{}

func (interrupted) Error() string { return "finetune: interrupted" }
func (interrupted) ExitCode() int { return exitInterrupted }

func main() { command.Main(run, os.Interrupt, syscall.SIGTERM, syscall.SIGHUP) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("finetune", usage, stderr)
	dataDir := fs.String("data", "", "folder of rectified stereo pairs: left/NAME.png and right/NAME.png (PNG or JPEG), optionally rig.json and truth/ (required)")
	out := fs.String("out", "", "file the trained weights are written to, safetensors (required)")
	weights := fs.String("weights", "", "weights file or training checkpoint to start from (default: the embedded weights)")
	scratch := fs.Bool("from-scratch", false, "start from a fresh random initialisation (seeded by -seed) at the default input size, with d_max from DIR/rig.json; used to train the default weights")
	stereo := fs.Bool("stereo", false, "with -from-scratch: the stereo network, which reads both views (otherwise the kind follows the starting weights)")
	opt := train.TrainerOptions{}
	fs.IntVar(&opt.Steps, "steps", 1000, "number of training steps (one batch each)")
	fs.IntVar(&opt.Batch, "batch", 4, "stereo pairs per step")
	fs.Float64Var(&opt.Schedule.Rate, "lr", train.DefaultRate, "base learning rate of Adam; it warms up linearly, then stays (see -milestones)")
	milestones := fs.String("milestones", "", "comma-separated fractions of the steps at which the learning rate halves, e.g. 0.6,0.8, or none\n(default: none; with -resume, the checkpoint's)")
	fs.IntVar(&opt.Schedule.Warmup, "warmup", 0, "warm-up steps (0: 2% of the steps, at most 200; -1: none)")
	fs.StringVar(&opt.CheckpointPath, "checkpoint", "", "checkpoint file (default: the -out path with .ckpt added); without -resume it must not exist yet")
	fs.IntVar(&opt.CheckpointEvery, "every", 100, "write the checkpoint every this many steps (0: only at the end and on a signal)")
	resume := fs.Bool("resume", false, "continue the run saved in the checkpoint file; give the same -data, -batch, -seed, -val and -steps as the interrupted run\n(another -batch, -seed or data is refused; another -steps or -lr continues with a changed schedule, with a note)")
	fs.Uint64Var(&opt.Seed, "seed", 1, "seed of the validation split, the shuffling and the augmentation (and of -from-scratch)")
	val := fs.Float64("val", 0.2, "fraction of the pairs held out for validation, scored before and after when they have ground truth (0: none)")
	noAugment := fs.Bool("no-augment", false, "train without flips and colour changes")
	evalBatch := fs.Int("eval-batch", 4, "validation pairs scored at once")
	logPath := fs.String("log", "", "CSV log of every step (default: the -out path with .csv instead of its extension)")
	plotPath := fs.String("plot", "", "loss-curve PNG (default: the -out path with .png instead of its extension)")
	f16 := fs.Bool("f16", false, "store the weights as 16-bit floats (half the size)")
	quiet := fs.Bool("quiet", false, "no progress output")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("finetune: unexpected argument %q (flags only; see -help)", fs.Arg(0))
	}
	if *dataDir == "" || *out == "" || opt.Steps < 1 || opt.Batch < 1 || opt.CheckpointEvery < 0 || *evalBatch < 1 || (*scratch && *weights != "") {
		return errors.New("finetune: -data DIR and -out FILE are required, -steps, -batch and -eval-batch must be positive, -every not negative, -weights and -from-scratch exclude each other (see -help)")
	}
	var err error
	if opt.Schedule.Milestones, err = train.ParseMilestones(*milestones); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	ds, err := dataset.Open(*dataDir)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	trainSet, valSet, err := data.Split(ds, *val, opt.Seed)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	opt.Validation = valSet // their objective, as points on the loss curve
	bar := progress.New(stderr, opt.Steps, &progress.Options{Unit: "steps", Mode: map[bool]progress.Mode{true: progress.Off}[*quiet]})
	job := &train.Job{
		Start: train.Start{Resume: *resume, Weights: *weights, Scratch: *scratch, Seed: opt.Seed, Rig: ds.Rig, Stereo: *stereo},
		Files: train.Files{Weights: *out, Checkpoint: opt.CheckpointPath, Log: *logPath, Plot: *plotPath},
		Data:  trainSet, Augment: map[bool]*data.Augment{false: &data.DefaultAugment}[*noAugment],
		Options: opt, CheckpointMilestones: *milestones == "",
		Info:  train.RunInfo{Data: *dataDir, Command: "finetune " + strings.Join(args, " ")},
		DType: map[bool]safetensors.DType{true: safetensors.F16, false: safetensors.F32}[*f16],
		Note:  func(s string) { bar.Note("finetune: note: " + s) },
	}
	if err := job.Open(); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	fmt.Fprintf(stderr, "finetune: %d training pairs (%d held out) from %s; starting from %s\n", len(trainSet.Pairs), len(ds.Pairs)-len(trainSet.Pairs), *dataDir, job.Origin)
	hasDisp, hasDepth := evaluation.Scorable(valSet)
	var before *evaluation.Report
	if (hasDisp || hasDepth) && !*resume {
		if before, err = evaluation.Score(context.WithoutCancel(ctx), job.Weights, valSet, &evaluation.ScoreOptions{Workers: *evalBatch}); err != nil {
			return fmt.Errorf("finetune: scoring before training: %w", err)
		}
	}
	job.Options.Progress = func(p train.Progress) {
		if n := p.Note(); n != "" {
			bar.Note(n)
		}
		bar.Update(p.Step, fmt.Sprintf("%.1f pairs/s  loss %.4f", p.PairsPerSec, p.Terms.Total))
	}
	res, err := job.Run(ctx)
	bar.Done()
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	if res.Interrupted {
		return fmt.Errorf("%w at step %d of %d; weights so far %s, checkpoint %s (continue with -resume)", errInterrupted, res.Step, opt.Steps, *out, res.Checkpoint)
	}
	if err := job.WriteSummary(stdout, res); err != nil {
		return err
	}
	if !hasDisp && !hasDepth {
		fmt.Fprint(stdout, map[bool]string{true: "\n(the held-out pairs have no ground truth: no metrics)\n"}[valSet != nil])
		return nil
	}
	after, err := evaluation.Score(context.WithoutCancel(ctx), res.Weights, valSet, &evaluation.ScoreOptions{Workers: *evalBatch})
	if err != nil {
		return fmt.Errorf("finetune: scoring after training: %w", err)
	}
	if before == nil {
		return evaluation.WriteTables(stdout, fmt.Sprintf("%d held-out pairs after training, each at its own resolution", len(valSet.Pairs)), after)
	}
	fmt.Fprintf(stdout, "\n%d held-out pairs, each at its own resolution\n", len(valSet.Pairs))
	return evaluation.WriteComparison(stdout, []*evaluation.Report{before}, []*evaluation.Report{after})
}
