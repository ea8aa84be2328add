// Command finetune trains the disparity network on a folder of rectified
// stereo pairs, without ground truth, and writes the weights:
//
//	go run ./examples/finetune -data DIR -out W.safetensors
//
// It starts from the embedded weights unless -weights names a weights file
// (or a checkpoint) or -from-scratch asks for a fresh initialisation;
// -resume continues an interrupted run from its checkpoint exactly. DIR
// has the layout of package dataset. When the pairs have ground truth, a
// held-out part (-val) is scored before and after with model/evaluation.
// It reports progress on stderr, writes a CSV log (-log) and a loss-curve
// PNG (-plot) beside the weights, and ends with a summary. SIGINT, SIGTERM
// and SIGHUP write a checkpoint and the weights so far and exit with
// status 3.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"syscall"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/progress"
	"github.com/parallaxdepth/parallax/safetensors"
)

const usage = `usage: finetune -data DIR -out W.safetensors [flags]

Fine-tunes the disparity network on rectified stereo pairs from your own rig, self-supervised (no
ground truth needed), on the CPU. Every output path is probed before step 1, and the free space for
the checkpoint and the weights is checked. SIGINT (Ctrl-C), SIGTERM and SIGHUP (a closed terminal)
write the checkpoint and the weights so far and exit with status 3; an unreadable pair writes the
checkpoint and exits with status 1; continue either with -resume. Flags:
`

// exitInterrupted is the exit status of a run stopped by a signal.
const exitInterrupted = 3

var errInterrupted = errors.New("finetune: interrupted")

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM, syscall.SIGHUP)
	err := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	if err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(map[bool]int{true: exitInterrupted, false: 1}[errors.Is(err, errInterrupted)])
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("finetune", flag.ContinueOnError)
	fs.SetOutput(stderr)
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
	fs.Usage = func() { fmt.Fprint(stderr, usage); fs.PrintDefaults() }
	if err := fs.Parse(args); errors.Is(err, flag.ErrHelp) {
		return nil
	} else if err != nil || fs.NArg() > 0 {
		return fmt.Errorf("finetune: %v (flags only; see -help)", errors.Join(err, map[bool]error{true: fmt.Errorf("unexpected argument %q", fs.Arg(0))}[fs.NArg() > 0]))
	}
	if *dataDir == "" || *out == "" || opt.Steps < 1 || opt.Batch < 1 || opt.CheckpointEvery < 0 || *evalBatch < 1 || (*scratch && *weights != "") {
		return errors.New("finetune: -data DIR and -out FILE are required, -steps, -batch and -eval-batch must be positive, -every not negative, -weights and -from-scratch exclude each other (see -help)")
	}
	base := strings.TrimSuffix(*out, filepath.Ext(*out))
	opt.CheckpointPath = or(opt.CheckpointPath, *out+".ckpt")
	*logPath, *plotPath = or(*logPath, base+".csv"), or(*plotPath, base+".png")
	outputs := []string{*out, opt.CheckpointPath, *logPath, *plotPath}
	if err := errors.Join(map[bool]error{false: train.CheckNewCheckpoint(opt.CheckpointPath)}[*resume], train.ProbeWritable(outputs...)); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	if removed, err := train.RemoveStaleTemps(outputs...); err != nil {
		return fmt.Errorf("finetune: %w", err)
	} else if len(removed) > 0 {
		fmt.Fprintf(stderr, "finetune: removed %d temporary file(s) an interrupted write had left: %s\n", len(removed), strings.Join(removed, ", "))
	}
	ds, err := dataset.Open(*dataDir)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	trainSet, valSet := ds, (*dataset.Set)(nil)
	if *val > 0 {
		if trainSet, valSet, err = data.Split(ds, *val, opt.Seed); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
	}
	if len(trainSet.Pairs) < opt.Batch {
		return fmt.Errorf("finetune: %d training pairs in %s make no batch of %d (lower -batch or -val)", len(trainSet.Pairs), *dataDir, opt.Batch)
	}
	w, ck, origin, err := train.Start{Resume: *resume, Checkpoint: opt.CheckpointPath, Weights: *weights, Scratch: *scratch, Seed: opt.Seed, Rig: ds.Rig, Stereo: *stereo}.Open()
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	if opt.Schedule.Milestones, err = train.ParseMilestones(*milestones); err != nil {
		return fmt.Errorf("finetune: %w", err)
	} else if ck != nil && *milestones == "" {
		opt.Schedule.Milestones = ck.Schedule.Milestones
	}
	if ck != nil {
		if note := train.ScheduleChange(ck, opt.Steps, opt.Schedule); note != "" {
			fmt.Fprintln(stderr, "finetune: note: "+note)
		}
	}
	need := map[string]int64{filepath.Dir(opt.CheckpointPath): train.CheckpointBytes(w)}
	need[filepath.Dir(*out)] += train.CheckpointBytes(w) / 3
	if err := train.CheckFreeSpace(need); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	fmt.Fprintf(stderr, "finetune: %d training pairs (%d held out) from %s; starting from %s\n", len(trainSet.Pairs), len(ds.Pairs)-len(trainSet.Pairs), *dataDir, origin)
	hasDisp, hasDepth := evaluation.Scorable(valSet)
	canScore := hasDisp || hasDepth
	var before *evaluation.Report
	if canScore && !*resume {
		if before, err = evaluation.Score(context.WithoutCancel(ctx), w, valSet, &evaluation.ScoreOptions{Workers: *evalBatch}); err != nil {
			return fmt.Errorf("finetune: scoring before training: %w", err)
		}
	}
	src, err := train.NewDatasetSource(trainSet, w.Config, opt.Batch, opt.Seed, map[bool]*data.Augment{false: &data.DefaultAugment}[*noAugment])
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	log := &train.StepLog{Path: *logPath}
	if ck != nil {
		if err := log.Load(ck.Step); err != nil {
			return err
		}
	}
	bar := progress.New(stderr, opt.Steps, &progress.Options{Unit: "steps", Mode: map[bool]progress.Mode{true: progress.Off}[*quiet]})
	opt.Progress = func(p train.Progress) {
		log.Add(p)
		if p.Skipped {
			bar.Note(fmt.Sprintf("step %d skipped: %s", p.Step, p.SkipReason))
		}
		if p.Collapsed {
			bar.Note(fmt.Sprintf("step %d: the disparity map is nearly constant or vanishing (spread %.4f, mean %.3f px, several steps in a row): training has collapsed; try a lower -lr", p.Step, p.Spread, p.MeanDisparity))
		}
		if err := map[bool]error{true: log.Save()}[p.Checkpoint != ""]; err != nil {
			bar.Note(err.Error())
		}
		bar.Update(p.Step, fmt.Sprintf("%.1f pairs/s  loss %.4f", p.PairsPerSec, p.Terms.Total))
	}
	tr, err := train.NewTrainer(w, src, &opt)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	defer tr.Close()
	if ck != nil {
		if err := tr.Resume(ck); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
	}
	began, startStep := time.Now(), tr.Step()
	res, err := tr.Run(ctx)
	bar.Done()
	if err != nil {
		return errors.Join(fmt.Errorf("finetune: %w", err), log.Save())
	}
	if err := errors.Join(log.Save(), log.SavePlot(*plotPath)); err != nil {
		return err
	}
	result := tr.Weights()
	info := train.RunInfo{Data: *dataDir, Start: origin, Rate: opt.Schedule.Rate, Milestones: opt.Schedule.Milestones, Command: "finetune " + strings.Join(args, " ")}
	if res.Interrupted {
		info.Interrupted = fmt.Sprintf("at step %d of %d", res.Step, opt.Steps)
	}
	info.Stamp(result)
	if err := result.Save(*out, map[bool]safetensors.DType{true: safetensors.F16, false: safetensors.F32}[*f16]); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	if res.Interrupted {
		return fmt.Errorf("%w at step %d of %d; weights so far %s, checkpoint %s (continue with -resume)", errInterrupted, res.Step, opt.Steps, *out, res.Checkpoint)
	}
	took := time.Since(began)
	fmt.Fprintf(stdout, "trained to step %d (%d steps of %d pairs in this run, %s, %.2f steps/s), %d skipped\nweights %s, checkpoint %s, log %s, curve %s\n",
		res.Step, res.Step-startStep, opt.Batch, took.Round(time.Second), float64(res.Step-startStep)/took.Seconds(), res.Skips, *out, res.Checkpoint, *logPath, *plotPath)
	first, last := log.Window(10)
	fmt.Fprintf(stdout, "\nloss (mean of the first and last %d steps)   start      end\n", min(10, log.Len()))
	for _, t := range [][3]any{{"appearance", first.Appearance, last.Appearance}, {"smoothness", first.Smoothness, last.Smoothness},
		{"consistency", first.Consistency, last.Consistency}, {"total", first.Total, last.Total}} {
		fmt.Fprintf(stdout, "  %-42s %9.5f %9.5f\n", t[:]...)
	}
	if res.Collapses > 0 {
		fmt.Fprintf(stdout, "\nwarning: the disparity collapsed to a near-constant map %d time(s); the weights may be useless\n", res.Collapses)
	}
	if !canScore {
		fmt.Fprint(stdout, map[bool]string{true: "\n(the held-out pairs have no ground truth: no metrics)\n"}[valSet != nil])
		return nil
	}
	after, err := evaluation.Score(context.WithoutCancel(ctx), result, valSet, &evaluation.ScoreOptions{Workers: *evalBatch})
	if err != nil {
		return fmt.Errorf("finetune: scoring after training: %w", err)
	}
	if before == nil {
		return evaluation.WriteTables(stdout, fmt.Sprintf("%d held-out pairs after training, each at its own resolution", len(valSet.Pairs)), after)
	}
	fmt.Fprintf(stdout, "\n%d held-out pairs, each at its own resolution\n", len(valSet.Pairs))
	return evaluation.WriteComparison(stdout, []*evaluation.Report{before}, []*evaluation.Report{after})
}

func or(s, def string) string {
	if s == "" {
		return def
	}
	return s
}
