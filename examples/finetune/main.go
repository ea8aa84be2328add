// Command finetune trains the disparity network on a folder of rectified
// stereo pairs, without ground truth, and writes the weights:
//
//	go run ./examples/finetune -data DIR -out W.safetensors
//
// It starts from the weights embedded in package model unless -from names
// a weights file (or a checkpoint) or -from-scratch asks for a fresh
// initialisation; -resume continues an interrupted run from its checkpoint
// exactly. DIR has the layout of package dataset: left/NAME.png and
// right/NAME.png (PNG or JPEG), optionally rig.json and truth/. When the
// pairs have ground truth, a held-out part (-val) is scored before and
// after with the depth package's metrics.
//
// While it runs it draws a progress bar on stderr (rate and ETA); it
// writes a CSV log (-log) and a loss-curve PNG (-plot) beside the weights,
// and ends with a summary. Ctrl-C saves a checkpoint and exits cleanly.
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
	"runtime"
	"strconv"
	"strings"
	"syscall"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/safetensors"
)

type config struct {
	data, out, from, checkpoint, logPath, plotPath string
	milestones                                     string
	scratch, stereo, resume, noAugment, quiet, f16 bool
	steps, batch, warmup, every, evalBatch         int
	lr, val                                        float64
	seed                                           uint64
	ctx                                            context.Context // nil: Ctrl-C and SIGTERM stop the run
}

func main() {
	var c config
	flag.StringVar(&c.data, "data", "", "folder of rectified stereo pairs: left/NAME.png and right/NAME.png (PNG or JPEG), optionally rig.json and truth/ (required)")
	flag.StringVar(&c.out, "out", "", "file the trained weights are written to, safetensors (required)")
	flag.StringVar(&c.from, "from", "", "weights file or training checkpoint to start from (default: the weights embedded in the program)")
	flag.BoolVar(&c.scratch, "from-scratch", false, "start from a fresh random initialisation (seeded by -seed) at the default input size, with d_max from DIR/rig.json; used to train the default weights")
	flag.BoolVar(&c.stereo, "stereo", false, "with -from-scratch: the stereo network, which reads both views (otherwise the kind follows the starting weights)")
	flag.IntVar(&c.steps, "steps", 1000, "number of training steps (one batch each)")
	flag.IntVar(&c.batch, "batch", 4, "stereo pairs per step")
	flag.Float64Var(&c.lr, "lr", train.DefaultRate, "base learning rate of Adam; it warms up linearly, then stays (see -milestones)")
	flag.StringVar(&c.milestones, "milestones", "", "comma-separated fractions of the steps at which the learning rate halves, e.g. 0.6,0.8, or none\n(default: none; with -resume, the checkpoint's)")
	flag.IntVar(&c.warmup, "warmup", 0, "warm-up steps (0: 2% of the steps, at most 200; -1: none)")
	flag.StringVar(&c.checkpoint, "checkpoint", "", "checkpoint file (default: the -out path with .ckpt added); without -resume it must not exist yet")
	flag.IntVar(&c.every, "every", 100, "write the checkpoint every this many steps (0: only at the end and on Ctrl-C)")
	flag.BoolVar(&c.resume, "resume", false, "continue the run saved in the checkpoint file; give the same -data, -batch, -seed, -val and -steps as the interrupted run\n(another -batch, -seed or data is refused; another -steps or -lr continues with a changed schedule, with a note)")
	flag.Uint64Var(&c.seed, "seed", 1, "seed of the validation split, the shuffling and the augmentation (and of -from-scratch)")
	flag.Float64Var(&c.val, "val", 0.2, "fraction of the pairs held out for validation, scored before and after when they have ground truth (0: none)")
	flag.BoolVar(&c.noAugment, "no-augment", false, "train without flips and colour changes")
	flag.IntVar(&c.evalBatch, "eval-batch", 4, "validation pairs scored at once")
	flag.StringVar(&c.logPath, "log", "", "CSV log of every step (default: the -out path with .csv instead of its extension)")
	flag.StringVar(&c.plotPath, "plot", "", "loss-curve PNG (default: the -out path with .png instead of its extension)")
	flag.BoolVar(&c.f16, "f16", false, "store the weights as 16-bit floats (half the size)")
	flag.BoolVar(&c.quiet, "quiet", false, "no progress bar")
	flag.Usage = func() {
		fmt.Fprintf(flag.CommandLine.Output(), `usage: finetune -data DIR -out W.safetensors [flags]

Fine-tunes the disparity network on rectified stereo pairs from your own rig,
self-supervised (no ground truth needed), on the CPU. Ctrl-C (or SIGTERM)
writes the checkpoint and the weights so far, and so does an unreadable pair
(the checkpoint only); continue with -resume. Flags:

`)
		flag.PrintDefaults()
	}
	flag.Parse()
	if err := run(c); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(c config) error {
	if flag.NArg() > 0 {
		return fmt.Errorf("finetune: unexpected argument %q (flags only; see -help)", flag.Arg(0))
	}
	if c.data == "" || c.out == "" {
		return errors.New("finetune: -data DIR and -out FILE are required (see -help)")
	}
	if c.steps < 1 || c.batch < 1 || c.every < 0 || c.evalBatch < 1 {
		return fmt.Errorf("finetune: -steps %d and -batch %d must be positive, -every %d not negative", c.steps, c.batch, c.every)
	}
	if c.scratch && c.from != "" {
		return errors.New("finetune: -from and -from-scratch exclude each other")
	}
	if c.stereo && !c.scratch {
		return errors.New("finetune: -stereo goes with -from-scratch (otherwise the kind follows the starting weights)")
	}
	if c.checkpoint == "" {
		c.checkpoint = c.out + ".ckpt"
	}
	if !c.resume {
		// A fresh run would replace an earlier run's checkpoint at its first
		// save: refuse rather than lose that state without a word.
		if _, err := os.Stat(c.checkpoint); err == nil {
			return fmt.Errorf("finetune: checkpoint %s exists from an earlier run; continue it with -resume, or remove it (or give another -checkpoint) to start over", c.checkpoint)
		}
	}
	base := strings.TrimSuffix(c.out, filepath.Ext(c.out))
	if c.logPath == "" {
		c.logPath = base + ".csv"
	}
	if c.plotPath == "" {
		c.plotPath = base + ".png"
	}
	// Hours of training must not end in a write to a folder that is not
	// there: check the output folders first.
	for _, f := range []struct{ flag, path string }{{"-out", c.out}, {"-checkpoint", c.checkpoint}, {"-log", c.logPath}, {"-plot", c.plotPath}} {
		if st, err := os.Stat(filepath.Dir(f.path)); err != nil || !st.IsDir() {
			return fmt.Errorf("finetune: %s %s: the folder %s does not exist", f.flag, f.path, filepath.Dir(f.path))
		}
	}
	if st, err := os.Stat(c.data); err != nil || !st.IsDir() {
		return fmt.Errorf("finetune: -data %s is not a folder", c.data)
	}
	ds, err := dataset.Open(c.data)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	trainSet, valSet := ds, (*dataset.Set)(nil)
	if c.val > 0 {
		if trainSet, valSet, err = data.Split(ds, c.val, c.seed); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
	}
	if len(trainSet.Pairs) < c.batch {
		return fmt.Errorf("finetune: %d training pairs in %s make no batch of %d (lower -batch or -val)", len(trainSet.Pairs), c.data, c.batch)
	}

	var ck *train.Checkpoint
	var w *model.Weights
	var origin string
	switch {
	case c.resume:
		if ck, err = train.LoadCheckpoint(c.checkpoint); err != nil {
			return fmt.Errorf("finetune: -resume: %w", err)
		}
		w, origin = ck.Weights, fmt.Sprintf("checkpoint %s at step %d", c.checkpoint, ck.Step)
		if c.milestones == "" {
			c.milestones = formatMilestones(ck.Schedule.Milestones)
		}
		if note := scheduleNote(ck, c); note != "" {
			fmt.Fprintln(os.Stderr, note)
		}
	case c.from != "":
		if w, _, err = train.LoadWeights(c.from); err != nil {
			return fmt.Errorf("finetune: -from: %w", err)
		}
		origin = "weights " + c.from
	case c.scratch:
		cfg := model.Config{}
		if c.stereo {
			cfg.Arch = model.StereoArchName
		}
		if ds.Rig != nil {
			if cfg.DMax, err = model.DMaxFromRig(ds.Rig); err != nil {
				return fmt.Errorf("finetune: d_max from %s: %w", filepath.Join(c.data, "rig.json"), err)
			}
		}
		if w, err = model.NewWeights(cfg, c.seed); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
		train.PrepareHeads(w) // small start disparities; see its doc
		origin = fmt.Sprintf("a fresh initialisation (seed %d, d_max %.4g of the width, heads prepared)", c.seed, w.Config.DMax)
	default:
		if w, err = model.Default(); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
		origin = "the embedded default weights"
	}
	fmt.Fprintf(os.Stderr, "finetune: %d training pairs", len(trainSet.Pairs))
	if valSet != nil {
		fmt.Fprintf(os.Stderr, ", %d held out", len(valSet.Pairs))
	}
	fmt.Fprintf(os.Stderr, " from %s, resized to %dx%d; starting from %s\n", c.data, w.Config.Width, w.Config.Height, origin)

	canScore := false
	if valSet != nil {
		disp, metric := evaluation.Scorable(valSet)
		canScore = disp || metric
	}
	var before *evaluation.Report
	if canScore && !c.resume {
		if before, err = evaluation.Score(context.Background(), w, valSet, &evaluation.ScoreOptions{Workers: c.evalBatch}); err != nil {
			return fmt.Errorf("finetune: scoring before training: %w", err)
		}
	}

	var aug *data.Augment
	if !c.noAugment {
		aug = &data.DefaultAugment
	}
	src, err := train.NewDatasetSource(trainSet, w.Config, c.batch, c.seed, aug)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	log := &stepLog{path: c.logPath}
	if c.resume {
		if err := log.load(ck.Step); err != nil {
			return err
		}
	}
	milestones, err := parseMilestones(c.milestones)
	if err != nil {
		return err
	}
	bar := newProgressBar(os.Stderr, c.quiet)
	opt := &train.TrainerOptions{
		Steps: c.steps, Batch: c.batch, Seed: c.seed,
		Schedule:       train.Schedule{Rate: c.lr, Warmup: c.warmup, Milestones: milestones},
		CheckpointPath: c.checkpoint, CheckpointEvery: c.every,
	}
	opt.Progress = func(p train.Progress) {
		log.add(p)
		if p.Skipped {
			bar.note(fmt.Sprintf("step %d skipped: %s", p.Step, p.SkipReason))
		}
		if p.Collapsed {
			bar.note(fmt.Sprintf("step %d: the disparity map is nearly constant or vanishing (spread %.4f, mean %.3f px, several steps in a row): training has collapsed; try a lower -lr", p.Step, p.Spread, p.MeanDisparity))
		}
		if p.Checkpoint != "" {
			if err := log.save(); err != nil {
				bar.note(err.Error())
			}
		}
		bar.draw(p)
	}
	tr, err := train.NewTrainer(w, src, opt)
	if err != nil {
		return fmt.Errorf("finetune: %w", err)
	}
	defer tr.Close()
	if ck != nil {
		if err := tr.Resume(ck); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
	}

	parent := c.ctx
	if parent == nil {
		parent = context.Background()
	}
	ctx, stop := signal.NotifyContext(parent, os.Interrupt, syscall.SIGTERM)
	defer stop()
	start, startStep := time.Now(), tr.Step()
	res, err := tr.Run(ctx)
	bar.done()
	stop()
	if err != nil {
		log.save()
		return fmt.Errorf("finetune: %w", err)
	}
	if err := log.save(); err != nil {
		return err
	}
	if err := savePlot(c.plotPath, log.rows); err != nil {
		return err
	}
	out := tr.Weights()
	out.Provenance["train.data"] = c.data
	out.Provenance["train.start"] = origin
	out.Provenance["train.date"] = time.Now().UTC().Format(time.RFC3339)
	out.Provenance["train.lr"] = fmt.Sprint(c.lr)
	out.Provenance["train.milestones"] = formatMilestones(milestones)
	out.Provenance["train.command"] = "finetune " + strings.Join(os.Args[1:], " ")
	delete(out.Provenance, model.ProvenanceStatus)
	dtype := safetensors.F32
	if c.f16 {
		dtype = safetensors.F16
	}
	if res.Interrupted {
		// The weights so far are written too, so an interrupted run leaves
		// something usable; -resume continues from the checkpoint.
		out.Provenance["train.interrupted"] = fmt.Sprintf("at step %d of %d", res.Step, c.steps)
		if err := out.Save(c.out, dtype); err != nil {
			return fmt.Errorf("finetune: %w", err)
		}
		fmt.Fprintf(os.Stderr, "finetune: interrupted at step %d of %d; weights so far %s, checkpoint %s (continue with -resume)\n", res.Step, c.steps, c.out, res.Checkpoint)
		return nil
	}
	if err := out.Save(c.out, dtype); err != nil {
		return fmt.Errorf("finetune: %w", err)
	}

	fmt.Printf("trained to step %d (%d steps of %d pairs in this run, %s, %.2f steps/s on %d threads), %d skipped\n",
		res.Step, res.Step-startStep, c.batch, time.Since(start).Round(time.Second), float64(res.Step-startStep)/time.Since(start).Seconds(), runtime.GOMAXPROCS(0), res.Skips)
	fmt.Printf("weights %s, checkpoint %s, log %s, curve %s\n", c.out, res.Checkpoint, c.logPath, c.plotPath)
	first, last := log.window(10)
	fmt.Printf("\nloss (mean of the first and last %d steps)   start      end\n", min(10, len(log.rows)))
	for _, t := range []struct {
		name string
		a, b float64
	}{
		{"appearance", first.Appearance, last.Appearance},
		{"smoothness", first.Smoothness, last.Smoothness},
		{"consistency", first.Consistency, last.Consistency},
		{"total", first.Total, last.Total},
	} {
		fmt.Printf("  %-42s %9.5f %9.5f\n", t.name, t.a, t.b)
	}
	if res.Collapses > 0 {
		fmt.Printf("\nwarning: the disparity collapsed to a near-constant map %d time(s); the weights may be useless\n", res.Collapses)
	}
	if canScore {
		after, err := evaluation.Score(context.Background(), out, valSet, &evaluation.ScoreOptions{Workers: c.evalBatch})
		if err != nil {
			return fmt.Errorf("finetune: scoring after training: %w", err)
		}
		printEval(os.Stdout, len(valSet.Pairs), before, after)
	} else if valSet != nil {
		fmt.Printf("\n(the held-out pairs have no ground truth: no metrics)\n")
	}
	return nil
}

// scheduleNote returns a warning if c resumes ck with another number of
// steps or base rate: the run continues, but its learning-rate schedule
// changes from the checkpoint on, so it is not the uninterrupted run.
func scheduleNote(ck *train.Checkpoint, c config) string {
	was := formatMilestones(ck.Schedule.Milestones)
	if ms, err := parseMilestones(c.milestones); err == nil {
		c.milestones = formatMilestones(ms)
	}
	if ck.Steps == c.steps && ck.Schedule.Rate == c.lr && was == c.milestones {
		return ""
	}
	return fmt.Sprintf("finetune: note: the checkpoint's run had -steps %d -lr %v -milestones %s, this one -steps %d -lr %v -milestones %s: the learning-rate schedule changes from step %d on, so the result differs from the uninterrupted run",
		ck.Steps, ck.Schedule.Rate, was, c.steps, c.lr, c.milestones, ck.Step)
}

// parseMilestones reads -milestones: "" or "none" for no decay, else
// comma-separated fractions (train.Schedule checks their range).
func parseMilestones(s string) ([]float64, error) {
	if s == "" || s == "none" {
		return nil, nil
	}
	var ms []float64
	for _, f := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil {
			return nil, fmt.Errorf("finetune: -milestones %q: %q is not a number", s, f)
		}
		ms = append(ms, v)
	}
	return ms, nil
}

// formatMilestones writes milestones as -milestones takes them.
func formatMilestones(ms []float64) string {
	if len(ms) == 0 {
		return "none"
	}
	parts := make([]string, len(ms))
	for i, m := range ms {
		parts[i] = strconv.FormatFloat(m, 'g', -1, 64)
	}
	return strings.Join(parts, ",")
}

func printEval(w io.Writer, n int, before, after *evaluation.Report) {
	fmt.Fprintf(w, "\nheld-out pairs: %d, scored at their own resolution (mean per pair)\n", n)
	col := func(e *evaluation.Report, f func(*evaluation.Report) float64) string {
		if e == nil {
			return "        -"
		}
		return fmt.Sprintf("%9.4f", f(e))
	}
	type row struct {
		name string
		f    func(*evaluation.Report) float64
	}
	var rows []row
	if after.HasDisparity {
		rows = append(rows,
			row{"disparity EPE (px)", func(e *evaluation.Report) float64 { return e.Disparity.EPE }},
			row{"bad-1 (> 1 px)", func(e *evaluation.Report) float64 { return e.Disparity.Bad1 }},
			row{"bad-3 (> 3 px)", func(e *evaluation.Report) float64 { return e.Disparity.Bad3 }})
	}
	if after.HasDepth {
		rows = append(rows,
			row{"abs rel", func(e *evaluation.Report) float64 { return e.Depth.AbsRel }},
			row{"sq rel (m)", func(e *evaluation.Report) float64 { return e.Depth.SqRel }},
			row{"RMSE (m)", func(e *evaluation.Report) float64 { return e.Depth.RMSE }},
			row{"RMSE log", func(e *evaluation.Report) float64 { return e.Depth.RMSELog }},
			row{"δ < 1.25", func(e *evaluation.Report) float64 { return e.Depth.Delta1 }},
			row{"δ < 1.25²", func(e *evaluation.Report) float64 { return e.Depth.Delta2 }},
			row{"δ < 1.25³", func(e *evaluation.Report) float64 { return e.Depth.Delta3 }})
	}
	fmt.Fprintf(w, "  %-20s %9s %9s\n", "", "before", "after")
	for _, r := range rows {
		fmt.Fprintf(w, "  %-20s %s %s\n", r.name, col(before, r.f), col(after, r.f))
	}
}
