// Command evaluate scores a depth method on stereo pairs with ground truth
// (package dataset's layout): one-image weights, stereo weights (-stereo),
// embedded or -weights, or the semi-global matcher (-method sgm), at each
// pair's own resolution, with package model/evaluation. Disparity is scored
// with the method's holes as 0, filled along the scan line, and on its valid
// pixels alone (with their coverage). With -adapt
// N it first fine-tunes the weights for N steps on the evaluated pairs
// (self-supervised: the ground truth is never used for training) and
// prints one before/after table.
//
//	go run ./examples/evaluate                         # testdata/synth/greenhouse
//	go run ./examples/evaluate -flip -errors errs DIR
//	go run ./examples/evaluate -stereo -adapt 200 DIR
//	go run ./examples/evaluate -method sgm -pair left.png,right.png,disp.pfm -rig rig.json
package main

import (
	"context"
	"fmt"
	_ "image/jpeg"
	"io"
	"path/filepath"
	"strings"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/progress"
)

const usage = `usage: evaluate [flags] [dataset folder]

Scores a method on pairs with ground truth (DIR/left, DIR/right, DIR/rig.json, DIR/truth/disp_left
and/or DIR/truth/depth_left; see package dataset; default testdata/synth/greenhouse). Disparity
errors are in pixels at each pair's resolution, with the method's holes as 0, filled along the
scan line, and left out (valid pixels only, with their coverage); depth errors use the rig and
count pixels inside its depth range; rates (bad-K, δ) in %.
Tables have a row per pair and their per-pair mean; a pair without any counted pixel shows 0 pixels
and NaN and is left out of the mean.

Flags:
`

func main() { command.Main(run) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("evaluate", usage, stderr)
	method := fs.String("method", "network", "what to score: network (the weights) or sgm (semi-global matching of both images)")
	stereo := fs.Bool("stereo", false, "score stereo weights (both images; default: the embedded stereo weights) instead of\none-image weights (the left image alone)")
	weights := fs.String("weights", "", "weights file (safetensors) of the kind -stereo says; default: the embedded weights of that kind")
	flip := fs.Bool("flip", false, "flip post-processing of one-image weights (see model.FlipBlend); with -adapt, half of the\nadaptation samples are mirrored too")
	errDir := fs.String("errors", "", "folder for error maps: NAME.disp-error.png (|d̂ − d|, 0 … 3 px) and\nNAME.depth-error.png (|ẑ − z|/z, 0 … 0.25), colour-mapped, bright = large;\nwith -adapt, the maps after adaptation go into its subfolder adapted/")
	var ad train.AdaptOptions
	fs.IntVar(&ad.Steps, "adapt", 0, "fine-tune for this many steps on the evaluated pairs (self-supervised, no ground truth)\nbefore a second evaluation; 0: no adaptation")
	fs.IntVar(&ad.Batch, "adapt-batch", 4, "pairs per adaptation step (at most the number of pairs)")
	fs.Float64Var(&ad.LearningRate, "adapt-lr", train.DefaultRate, "the adaptation's learning rate (Adam, after a warm-up of 2 % of the steps)")
	fs.Uint64Var(&ad.Seed, "seed", 1, "seed of the adaptation's batch order")
	pair := fs.String("pair", "", "evaluate one pair given as files LEFT,RIGHT,DISP (images and the left disparity PFM in\npixels, non-finite = unknown) instead of a dataset folder")
	rigPath := fs.String("rig", "", "with -pair: the rig JSON file, rescaled to the images' size (their aspect ratio must match\nwithin 1%); depth is scored only with a rig")
	csvOut := fs.Bool("csv", false, "print one CSV table (columns phase, holes, pair, then the measures) instead of text")
	quiet := fs.Bool("quiet", false, "no progress output")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	src, files := *pair, strings.Split(*pair, ",")
	if fs.NArg() > 1 || (*pair != "" && (fs.NArg() > 0 || len(files) != 3)) || (*pair == "" && *rigPath != "") {
		return fmt.Errorf("evaluate: give one dataset folder, or -pair LEFT,RIGHT,DISP (and -rig) without a folder, not %q (see -help)", append(fs.Args(), *pair))
	}
	if ad.Steps < 0 || ad.Batch < 1 || !(ad.LearningRate > 0) || (*method != "network" && (ad.Steps > 0 || *weights != "" || *stereo)) {
		return fmt.Errorf("evaluate: -adapt %d, -adapt-batch %d, -adapt-lr %v: want -adapt ≥ 0, -adapt-batch ≥ 1, -adapt-lr > 0; -adapt, -weights and -stereo go with -method network", ad.Steps, ad.Batch, ad.LearningRate)
	}
	ds, err := (*dataset.Set)(nil), error(nil)
	if src == "" {
		src = map[bool]string{true: "testdata/synth/greenhouse", false: fs.Arg(0)}[fs.NArg() == 0]
		ds, err = dataset.Open(src)
	} else {
		ds, err = dataset.FromFiles(files[0], files[1], map[dataset.Kind]string{dataset.DispLeft: files[2]}, *rigPath)
	}
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	if _, hasDepth := evaluation.Scorable(ds); ds.Has(dataset.DepthLeft) && !hasDepth {
		fmt.Fprintf(stderr, "evaluate: %s has depth truth but no rig: depth is not scored\n", src)
	}
	w, err := model.LoadKind(*weights, *stereo) // sgm runs none (NewMethod below)
	if err != nil {
		return fmt.Errorf("evaluate: %w (-stereo goes with stereo weights)", err)
	}
	mode := map[bool]progress.Mode{true: progress.Off}[*quiet]
	var phases []evaluation.Phase
	score := func(phase string, w *model.Weights, dir string) ([]*evaluation.Report, error) {
		m, err := evaluation.NewMethod(*method, map[bool]*model.Weights{true: w}[*method == "network"], &evaluation.MethodOptions{Rig: ds.Rig, Flip: *flip})
		if err != nil {
			return nil, fmt.Errorf("evaluate: %w", err)
		}
		bar := progress.New(stderr, len(ds.Pairs), &progress.Options{Unit: "pairs", Label: phase, Mode: mode})
		opt := &evaluation.ScoreOptions{Progress: func(done, _ int) { bar.Update(done, "") }, Inspect: evaluation.ErrorMaps(dir)}
		reps, err := evaluation.ScoreRules(ctx, m, ds, opt, evaluation.HolesZero, evaluation.HolesFilled, evaluation.HolesExcluded)
		bar.Done()
		if err != nil {
			return nil, fmt.Errorf("evaluate: %w", err)
		}
		for _, n := range reps[0].Notes() {
			fmt.Fprintf(stderr, "evaluate: %s\n", n)
		}
		for _, r := range reps {
			phases = append(phases, evaluation.Phase{Name: phase, Report: r})
		}
		title := fmt.Sprintf("%s: %s — %s, %d pairs, flip %v", phase, map[bool]string{true: "weights " + model.DescribeWeights(w, *weights),
			false: evaluation.SGMTitle}[*method == "network"], src, len(ds.Pairs), *flip)
		if *csvOut || ad.Steps > 0 { // the CSV or the comparison comes at the end
			fmt.Fprint(map[bool]io.Writer{true: io.Discard, false: stdout}[*csvOut], "\n"+title+"\n")
			return reps, nil
		}
		return reps, evaluation.WriteTables(stdout, title, reps...)
	}
	before, err := score(map[bool]string{true: "before adaptation", false: *method}[ad.Steps > 0], w, *errDir)
	if err != nil || ad.Steps == 0 {
		return writeCSV(err, *csvOut, stdout, phases)
	}
	bar := progress.New(stderr, ad.Steps, &progress.Options{Unit: "steps", Label: "adapting", Mode: mode})
	ad.Flip, ad.Progress = *flip, func(p train.Progress) { bar.Update(p.Step, fmt.Sprintf("loss %.4f", p.Terms.Total)) }
	adapted, res, err := train.Adapt(ctx, w, ds, &ad)
	bar.Done()
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	after, err := score("after adaptation", adapted, map[bool]string{true: filepath.Join(*errDir, "adapted")}[*errDir != ""])
	if err != nil || *csvOut {
		return writeCSV(err, *csvOut, stdout, phases)
	}
	fmt.Fprintf(stdout, "\nadaptation: %d steps (%d skipped) of batch %d; loss %.4f → %.4f%s\n", res.Step, res.Skips, min(ad.Batch, len(ds.Pairs)), res.First.Total, res.Last.Total, map[bool]string{true: " (interrupted: the weights reached so far are scored)"}[res.Interrupted])
	return evaluation.WriteComparison(stdout, before, after)
}

// writeCSV returns err, or writes the CSV table of phases if on.
func writeCSV(err error, on bool, stdout io.Writer, phases []evaluation.Phase) error {
	if err != nil || !on {
		return err
	}
	return evaluation.WriteCSV(stdout, phases)
}
