// Package demo bundles a small synthetic input so that the example commands
// run with no set-up: the left image of a greenhouse aisle (256×128, made by
// package synth, pair 000000 of testdata/synth/greenhouse, seed 1) and the
// rig it was rendered with (72° field of view, 0.12 m baseline). The data
// is invented by our renderer; it is for demonstrations, not evaluation.
// Folders of images are read with package dataset (ImageFiles, Frames,
// LoadImage).
//
// Errors start with "demo: ".
package demo

import (
	"bytes"
	_ "embed"
	"fmt"
	"image"
	"image/png"

	"github.com/parallaxdepth/parallax/depth"
)

var (
	//go:embed greenhouse_left.png
	leftPNG []byte
	//go:embed greenhouse_rig.json
	rigJSON []byte
)

// Name is the demo image's name, for output file names.
const Name = "greenhouse_000000"

// Left decodes and returns the demo left image.
func Left() (image.Image, error) {
	img, err := png.Decode(bytes.NewReader(leftPNG))
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	return img, nil
}

// Rig returns the demo image's rig (a fresh copy).
func Rig() (*depth.Rig, error) {
	r, err := depth.ReadRig(bytes.NewReader(rigJSON))
	if err != nil {
		return nil, fmt.Errorf("demo: %w", err)
	}
	return r, nil
}
