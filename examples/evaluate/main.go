// Command evaluate scores the depth network on a folder of stereo pairs with
// ground truth (the layout of package dataset, as package synth writes
// it): it estimates the left view's disparity of every pair at the pair's
// own resolution with model.Estimator, prints the disparity and depth error
// tables of package depth, and can write error-map images. With -adapt N it
// first fine-tunes the weights for N steps on the evaluated pairs themselves
// with the self-supervised objective (left and right images only; the
// ground truth is never used for training) and reports both.
//
//	go run ./examples/evaluate                         # testdata/synth/greenhouse
//	go run ./examples/evaluate -flip -errors errs DIR
//	go run ./examples/evaluate -adapt 200 DIR
//	go run ./examples/evaluate -pair left.png,right.png,disp.pfm -rig rig.json
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	_ "image/jpeg"
	"io"
	"math"
	"os"
	"os/signal"
	"path/filepath"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/model/train"
)

const defaultData = "testdata/synth/greenhouse"

type options struct {
	weights, errors  string
	pair, rig        string
	source           string // what the tables name as the data; "" means the folder
	flip, csv, quiet bool
	adapt, batch     int
	seed             uint64
}

func main() {
	var o options
	flag.StringVar(&o.weights, "weights", "", "weights file (safetensors); default: the embedded weights")
	flag.BoolVar(&o.flip, "flip", false, "flip post-processing (see model.FlipBlend); with -adapt, half of the adaptation\nsamples are mirrored too")
	flag.StringVar(&o.errors, "errors", "", "folder for error maps: NAME.disp-error.png (|d̂ − d|, 0 … 3 px) and\nNAME.depth-error.png (|ẑ − z|/z, 0 … 0.25), colour-mapped, bright = large;\nwith -adapt, the maps after adaptation go into its subfolder adapted/")
	flag.IntVar(&o.adapt, "adapt", 0, "fine-tune for this many steps on the evaluated pairs (self-supervised, no ground truth)\nbefore a second evaluation; 0: no adaptation")
	flag.IntVar(&o.batch, "adapt-batch", 4, "pairs per adaptation step (at most the number of pairs)")
	flag.Uint64Var(&o.seed, "seed", 1, "seed of the adaptation's batch order")
	flag.StringVar(&o.pair, "pair", "", "evaluate one pair given as files LEFT,RIGHT,DISP (images and the left disparity PFM in\npixels, non-finite = unknown) instead of a dataset folder")
	flag.StringVar(&o.rig, "rig", "", "with -pair: the rig JSON file, rescaled to the images' size (their aspect ratio must match\nwithin 1%); depth is scored only with a rig")
	flag.BoolVar(&o.csv, "csv", false, "print the tables as CSV")
	flag.BoolVar(&o.quiet, "quiet", false, "no progress output")
	flag.Usage = func() {
		fmt.Fprintf(flag.CommandLine.Output(), `usage: evaluate [flags] [dataset folder]

Scores the network on pairs with ground truth (DIR/left, DIR/right, DIR/rig.json,
DIR/truth/disp_left and/or DIR/truth/depth_left; see package dataset).
Default folder: %s. Disparity errors are in pixels at each pair's
resolution; depth errors use the folder's rig and count pixels inside its depth
range. Each table has one row per pair and their mean (per-pair average); a pair
without any valid pixel shows 0 pixels and NaN and is left out of the mean.

Flags:
`, defaultData)
		flag.PrintDefaults()
	}
	flag.Parse()
	dir := defaultData
	if flag.NArg() > 1 {
		fmt.Fprintln(os.Stderr, "evaluate: give one dataset folder (see -help)")
		os.Exit(2)
	} else if flag.NArg() == 1 {
		dir = flag.Arg(0)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	if err := main1(ctx, o, dir, flag.NArg() == 1); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func main1(ctx context.Context, o options, dir string, dirGiven bool) error {
	var ds *dataset.Set
	var err error
	switch {
	case o.pair != "":
		if dirGiven {
			return errors.New("evaluate: give either -pair or a dataset folder")
		}
		if ds, err = pairSet(o.pair, o.rig); err != nil {
			return err
		}
		o.source = o.pair
	case o.rig != "":
		return errors.New("evaluate: -rig goes with -pair; a dataset folder has its own rig.json")
	default:
		if ds, err = dataset.Open(dir); err != nil {
			return fmt.Errorf("evaluate: %w", err)
		}
	}
	return run(ctx, o, ds, os.Stdout, os.Stderr)
}

// pairSet makes a set of the one pair of files given as LEFT,RIGHT,DISP,
// with the rig file (if any) rescaled to the images' size.
func pairSet(pair, rigPath string) (*dataset.Set, error) {
	files := strings.Split(pair, ",")
	if len(files) != 3 {
		return nil, fmt.Errorf("evaluate: -pair %q: want LEFT,RIGHT,DISP", pair)
	}
	ds, err := dataset.FromFiles(files[0], files[1], map[dataset.Kind]string{dataset.DispLeft: files[2]}, rigPath)
	if err != nil {
		return nil, fmt.Errorf("evaluate: %w", err)
	}
	return ds, nil
}

func run(ctx context.Context, o options, ds *dataset.Set, stdout, stderr io.Writer) error {
	var err error
	dir := ds.Dir
	if o.source != "" {
		dir = o.source
	}
	hasDisp, hasDepth := evaluation.Scorable(ds)
	if ds.Has(dataset.DepthLeft) && !ds.HasRig() {
		fmt.Fprintf(stderr, "evaluate: %s has depth truth but no rig.json nor rigs/: depth is not scored\n", dir)
	}
	if !hasDisp && !hasDepth {
		return fmt.Errorf("evaluate: %s has no truth/disp_left or truth/depth_left to score against", dir)
	}
	if o.adapt < 0 || o.batch < 1 {
		return fmt.Errorf("evaluate: -adapt %d and -adapt-batch %d must be non-negative and positive", o.adapt, o.batch)
	}
	var w *model.Weights
	if o.weights != "" {
		w, err = model.Load(o.weights)
	} else {
		w, err = model.Default()
	}
	if err != nil {
		return err
	}
	label := "weights"
	if o.adapt > 0 {
		label = "before adaptation"
	}
	if err := evaluate(ctx, o, ds, w, label, hasDisp, hasDepth, stdout, stderr); err != nil {
		return err
	}
	if o.adapt == 0 {
		return nil
	}
	start := time.Now()
	adapted, res, err := adapt(ctx, o, ds, w, stderr)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "\nadaptation: %d steps (%d skipped) of batch %d in %.1f s; loss %.4f → %.4f\n", res.Step, res.Skips, min(o.batch, len(ds.Pairs)),
		time.Since(start).Seconds(), res.First.Total, res.Last.Total)
	if res.Interrupted {
		fmt.Fprintln(stdout, "adaptation interrupted: the tables below use the weights reached so far")
	}
	if o.errors != "" {
		o.errors = filepath.Join(o.errors, "adapted")
	}
	return evaluate(ctx, o, ds, adapted, "after adaptation", hasDisp, hasDepth, stdout, stderr)
}

// adapt fine-tunes w on the pairs of ds (left and right images only).
func adapt(ctx context.Context, o options, ds *dataset.Set, w *model.Weights, stderr io.Writer) (*model.Weights, *train.RunResult, error) {
	batch := min(o.batch, len(ds.Pairs))
	// With -flip the estimate also runs on mirrored images: mirror half of
	// the adaptation samples (and swap their views, see data.FlipSwap) so
	// that those stay inside what the network is fitted to.
	var aug *data.Augment
	if o.flip {
		aug = &data.Augment{Flip: 0.5}
	}
	src, err := train.NewDatasetSource(ds, w.Config, batch, o.seed, aug)
	if err != nil {
		return nil, nil, fmt.Errorf("evaluate: %w", err)
	}
	opt := &train.TrainerOptions{Steps: o.adapt, Batch: batch, Seed: o.seed}
	if !o.quiet {
		opt.Progress = func(p train.Progress) {
			if p.Step%10 == 0 || p.Step == o.adapt {
				fmt.Fprintf(stderr, "\radapting: step %d/%d", p.Step, o.adapt)
			}
		}
	}
	tr, err := train.NewTrainer(w, src, opt)
	if err != nil {
		return nil, nil, fmt.Errorf("evaluate: %w", err)
	}
	defer tr.Close()
	res, err := tr.Run(ctx)
	if !o.quiet {
		fmt.Fprintln(stderr)
	}
	if err != nil {
		return nil, nil, fmt.Errorf("evaluate: %w", err)
	}
	return tr.Weights(), res, nil
}

// evaluate scores w on every pair of ds with package model/evaluation and
// prints the tables.
func evaluate(ctx context.Context, o options, ds *dataset.Set, w *model.Weights, label string, hasDisp, hasDepth bool, stdout, stderr io.Writer) error {
	if o.errors != "" {
		if err := os.MkdirAll(o.errors, 0o755); err != nil {
			return fmt.Errorf("evaluate: %w", err)
		}
	}
	opt := &evaluation.ScoreOptions{Flip: o.flip}
	if !o.quiet {
		opt.Progress = func(done, total int) { fmt.Fprintf(stderr, "\r%s: pair %d/%d", label, done, total) }
	}
	if o.errors != "" {
		opt.Inspect = func(s *evaluation.PairScore, e *model.Estimate, r *dataset.Record) error {
			if hasDisp {
				if err := saveError(filepath.Join(o.errors, s.Name+".disp-error.png"), &e.Disparity.Map, &r.DispLeft.Map, false, 3); err != nil {
					return err
				}
			}
			if hasDepth {
				return saveError(filepath.Join(o.errors, s.Name+".depth-error.png"), &e.Depth.Map, &r.DepthLeft.Map, true, 0.25)
			}
			return nil
		}
	}
	start := time.Now()
	rep, err := evaluation.Score(ctx, w, ds, opt)
	if !o.quiet {
		fmt.Fprintln(stderr)
	}
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	if !o.quiet {
		fmt.Fprintf(stderr, "%s: %d pairs in %.1f s\n", label, len(ds.Pairs), time.Since(start).Seconds())
	}
	for _, e := range []struct {
		what  string
		names []string
	}{{"disparity", rep.EmptyDisparity}, {"depth", rep.EmptyDepth}} {
		if len(e.names) > 0 {
			fmt.Fprintf(stderr, "evaluate: %d pairs have no pixel with a valid %s estimate and truth (pixels 0, NaN below; left out of the mean): %s\n",
				len(e.names), e.what, strings.Join(e.names, ", "))
		}
	}
	src := ds.Dir
	if o.source != "" {
		src = o.source
	}
	fmt.Fprintf(stdout, "\n%s — %s, %d pairs, flip %v\n", label, src, len(ds.Pairs), o.flip)
	many := len(rep.Pairs) > 1
	if rep.HasDisparity {
		var s depth.Summary
		for _, p := range rep.Pairs {
			s.AddDisparity(p.Name, p.Disparity)
		}
		if many {
			s.AddDisparity("mean", rep.Disparity)
		}
		if err := print(stdout, "disparity (pixels at each pair's resolution; bad-K = fraction off by more than K px)", &s, o.csv); err != nil {
			return err
		}
	}
	if rep.HasDepth {
		var s depth.Summary
		for _, p := range rep.Pairs {
			s.AddDepth(p.Name, p.Depth)
		}
		if many {
			s.AddDepth("mean", rep.Depth)
		}
		within := "each pair's rig's range"
		if ds.Rig != nil {
			within = fmt.Sprintf("%.2f … %.2f m", ds.Rig.MinDepth, ds.Rig.MaxDepth)
		}
		if err := print(stdout, fmt.Sprintf("depth (metres, no median scaling, ground truth within %s)", within), &s, o.csv); err != nil {
			return err
		}
	}
	return nil
}

func print(w io.Writer, title string, s *depth.Summary, csv bool) error {
	fmt.Fprintf(w, "\n%s\n", title)
	if csv {
		return s.WriteCSV(w)
	}
	return s.WriteTable(w)
}

// saveError writes |est − gt| (relative to gt if rel) of the pixels valid
// in both, colour-mapped over [0, top]; other pixels are transparent.
func saveError(path string, est, gt *depth.Map, rel bool, top float64) error {
	em, err := depth.NewDisparity(est.Rect)
	if err != nil {
		return err
	}
	for y := est.Rect.Min.Y; y < est.Rect.Max.Y; y++ {
		for x := est.Rect.Min.X; x < est.Rect.Max.X; x++ {
			a, ok1 := est.At(x, y)
			b, ok2 := gt.At(x, y)
			if !ok1 || !ok2 {
				continue
			}
			e := math.Abs(float64(a - b))
			if rel {
				e /= float64(b)
			}
			// The map type keeps positive values only; an exact match
			// gets the smallest positive value instead of 0.
			em.Set(x, y, float32(max(e, 1e-30)))
		}
	}
	img, err := depth.ColorDisparity(em, &depth.ColorOptions{Min: 0, Max: top})
	if err != nil {
		return err
	}
	return depth.SavePNG(path, img)
}
