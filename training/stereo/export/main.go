// Command export writes the weights of a training checkpoint as a weights
// file with a status line, the step in the embedded stereo weights'
// provenance:
//
//	go run ./training/stereo/export -checkpoint training/stereo/checkpoint.safetensors \
//	    -out model/weights/stereo.safetensors -status "step 1200 of 20000 of training/stereo"
//
// With -upgrade it turns version 1 stereo weights (matcher at half
// resolution) into version 2 weights (matcher at full resolution, read by the
// full-resolution step too; model.Weights.UpgradeStereo): the start of a
// fine-tuning run that teaches the network the full-resolution matches.
package main

import (
	"errors"
	"flag"
	"fmt"
	"os"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
	"github.com/parallaxdepth/parallax/safetensors"
)

func main() {
	ck := flag.String("checkpoint", "", "training checkpoint (required)")
	out := flag.String("out", "", "weights file to write (required)")
	status := flag.String("status", "", "provenance status line (required)")
	upgrade := flag.Bool("upgrade", false, "turn version 1 stereo weights into version 2 (model.Weights.UpgradeStereo)")
	f32 := flag.Bool("f32", false, "write F32 (default F16, as embedded)")
	flag.Parse()
	if err := run(*ck, *out, *status, *upgrade, *f32); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(ck, out, status string, upgrade, f32 bool) error {
	if ck == "" || out == "" || status == "" {
		return errors.New("export: -checkpoint, -out and -status are required")
	}
	c, err := train.LoadCheckpoint(ck)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	w := c.Weights
	if upgrade {
		if err := w.UpgradeStereo(); err != nil {
			return fmt.Errorf("export: -upgrade: %w", err)
		}
		w.Provenance["export.upgraded_from_version"] = "1"
	}
	w.Provenance[model.ProvenanceStatus] = status
	w.Provenance["train.checkpoint_step"] = fmt.Sprint(c.Step)
	dtype := safetensors.F16
	if f32 {
		dtype = safetensors.F32
	}
	return w.Save(out, dtype)
}
