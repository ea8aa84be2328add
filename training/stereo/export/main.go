// Command export writes the weights of a training checkpoint as an F16
// weights file with a status line, the step in the embedded stereo
// weights' provenance:
//
//	go run ./training/stereo/export -checkpoint training/stereo/checkpoint.safetensors \
//	    -out model/weights/stereo.safetensors -status "step 1200 of 20000 of training/stereo"
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
	out := flag.String("out", "", "weights file to write, F16 (required)")
	status := flag.String("status", "", "provenance status line (required)")
	flag.Parse()
	if err := run(*ck, *out, *status); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(ck, out, status string) error {
	if ck == "" || out == "" || status == "" {
		return errors.New("export: -checkpoint, -out and -status are required")
	}
	c, err := train.LoadCheckpoint(ck)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	w := c.Weights
	w.Provenance[model.ProvenanceStatus] = status
	w.Provenance["train.checkpoint_step"] = fmt.Sprint(c.Step)
	return w.Save(out, safetensors.F16)
}
