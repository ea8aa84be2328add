// Command export writes the weights of a training checkpoint as a weights
// file with a status line, the step in the embedded stereo weights'
// provenance:
//
//	go run ./training/stereo/export -checkpoint training/stereo/checkpoint.safetensors \
//	    -out model/weights/stereo.safetensors -status "step 1200 of 20000 of training/stereo"
//
// With -version 2 it relabels version 1 stereo weights (matcher at half
// resolution) as version 2 (matcher at full resolution; same layers and
// parameters, see model.Config.MatchLevel): the start of a fine-tuning run
// that teaches the network the full-resolution matcher's estimate.
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
	version := flag.Int("version", 0, "stereo architecture version to write (1 or 2); 0 keeps the checkpoint's")
	f32 := flag.Bool("f32", false, "write F32 (default F16, as embedded)")
	flag.Parse()
	if err := run(*ck, *out, *status, *version, *f32); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(ck, out, status string, version int, f32 bool) error {
	if ck == "" || out == "" || status == "" {
		return errors.New("export: -checkpoint, -out and -status are required")
	}
	c, err := train.LoadCheckpoint(ck)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	w := c.Weights
	if version != 0 {
		if w.Config.Arch != model.StereoArchName {
			return fmt.Errorf("export: -version %d: the checkpoint holds %s weights, not stereo", version, w.Config.Arch)
		}
		from := w.Config.Version
		w.Config.Version = version
		if err := w.Check(); err != nil {
			return fmt.Errorf("export: -version %d: %w", version, err)
		}
		w.Provenance["export.relabelled_from_version"] = fmt.Sprint(from)
	}
	w.Provenance[model.ProvenanceStatus] = status
	w.Provenance["train.checkpoint_step"] = fmt.Sprint(c.Step)
	dtype := safetensors.F16
	if f32 {
		dtype = safetensors.F32
	}
	return w.Save(out, dtype)
}
