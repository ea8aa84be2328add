//go:build ignore

// Command run trains one short run of the learning-rate schedule comparison
// (see README.md beside it) and writes its weights and a CSV log:
//
//	go run training/schedule/run.go -data DIR -milestones 0.6,0.8 -steps 2000 -out W.safetensors
//
// It uses the library directly so that the network can be smaller than the
// default (-width, -height); everything else is as in the finetune command
// (fresh initialisation with prepared heads, default augmentation, Adam,
// warm-up, decay 0.5 at each milestone).
package main

import (
	"context"
	"encoding/csv"
	"flag"
	"fmt"
	"log"
	"os"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/safetensors"
)

func main() {
	dir := flag.String("data", "", "training pairs (a synth folder)")
	out := flag.String("out", "", "weights file to write")
	logPath := flag.String("log", "", "CSV log (default: -out with .csv)")
	steps := flag.Int("steps", 2000, "training steps")
	batch := flag.Int("batch", 4, "pairs per step")
	width := flag.Int("width", 128, "network input width")
	height := flag.Int("height", 64, "network input height")
	ms := flag.String("milestones", "0.6,0.8", "comma-separated fractions of the steps at which the rate halves; \"none\" for none")
	seed := flag.Uint64("seed", 1, "seed of the initialisation, order and augmentation")
	flag.Parse()
	if *dir == "" || *out == "" {
		log.Fatal("run: -data and -out are required")
	}
	if *logPath == "" {
		*logPath = strings.TrimSuffix(*out, ".safetensors") + ".csv"
	}
	milestones := []float64{}
	if *ms != "none" {
		for _, f := range strings.Split(*ms, ",") {
			v, err := strconv.ParseFloat(f, 64)
			if err != nil {
				log.Fatalf("run: -milestones: %v", err)
			}
			milestones = append(milestones, v)
		}
	}
	ds, err := dataset.Open(*dir)
	if err != nil {
		log.Fatal(err)
	}
	cfg := model.Config{Width: *width, Height: *height}
	if cfg.DMax, err = model.DMaxFromRig(ds.Rig); err != nil {
		log.Fatal(err)
	}
	w, err := model.NewWeights(cfg, *seed)
	if err != nil {
		log.Fatal(err)
	}
	train.PrepareHeads(w)
	src, err := train.NewDatasetSource(ds, w.Config, *batch, *seed, &data.DefaultAugment)
	if err != nil {
		log.Fatal(err)
	}
	f, err := os.Create(*logPath)
	if err != nil {
		log.Fatal(err)
	}
	cw := csv.NewWriter(f)
	cw.Write([]string{"step", "rate", "total", "appearance", "smoothness", "consistency", "steps_per_s"})
	opt := &train.TrainerOptions{Steps: *steps, Batch: *batch, Seed: *seed, Schedule: train.Schedule{Milestones: milestones}}
	opt.Progress = func(p train.Progress) {
		g := func(v float64) string { return strconv.FormatFloat(v, 'g', 6, 64) }
		cw.Write([]string{strconv.Itoa(p.Step), g(p.Rate), g(p.Terms.Total), g(p.Terms.Appearance), g(p.Terms.Smoothness), g(p.Terms.Consistency), g(p.StepsPerSec)})
		if p.Step%100 == 0 {
			fmt.Fprintf(os.Stderr, "step %d/%d rate %.3g loss %.4f (%.2f steps/s)\n", p.Step, p.Steps, p.Rate, p.Terms.Total, p.StepsPerSec)
		}
	}
	tr, err := train.NewTrainer(w, src, opt)
	if err != nil {
		log.Fatal(err)
	}
	res, err := tr.Run(context.Background())
	if err != nil {
		log.Fatal(err)
	}
	cw.Flush()
	if err := f.Close(); err != nil {
		log.Fatal(err)
	}
	w = tr.Weights()
	w.Provenance = map[string]string{"status": fmt.Sprintf("schedule comparison run: milestones %s, %d steps", *ms, res.Step)}
	if err := w.Save(*out, safetensors.F32); err != nil {
		log.Fatal(err)
	}
	tr.Close()
	fmt.Fprintf(os.Stderr, "wrote %s after %d steps (%d skipped)\n", *out, res.Step, res.Skips)
}
