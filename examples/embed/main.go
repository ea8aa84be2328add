// Command embed is the frame loop to copy into your own program: metric
// depth for each image of a folder (name order), and the nearest point in
// the central third of the view.
//
//	go run ./examples/embed [-rig rig.json] [-weights W.safetensors] [folder]
//
// Without a folder it runs on the bundled demo image. Estimated depth is
// not a safety-rated sensor.
package main

import (
	"context"
	"fmt"
	"io"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
)

func main() { command.Main(run) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("embed", "usage: embed [flags] [folder]\n\nPrints the nearest point ahead for each image of folder (default: the bundled demo image). Flags:\n", stderr)
	rigPath := fs.String("rig", "", "rig JSON file of your cameras (see depth.ReadRig); default: the bundled demo's rig")
	weights := fs.String("weights", "", "weights file (safetensors, see package model); default: the embedded weights")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	if fs.NArg() > 1 {
		return fmt.Errorf("embed: one folder at most, got %d arguments", fs.NArg())
	}
	rig, err := demo.Rig() // your cameras: depth.LoadRig("rig.json")
	if *rigPath != "" {
		rig, err = depth.LoadRig(*rigPath)
	}
	if err != nil {
		return fmt.Errorf("embed: %w", err)
	}
	w, err := model.LoadOrDefault(*weights) // "": the embedded weights
	if err != nil {
		return fmt.Errorf("embed: %w", err)
	}
	est, err := model.NewEstimator(w, &model.EstimatorOptions{Rig: rig})
	if err != nil {
		return fmt.Errorf("embed: %w", err)
	}
	frames := dataset.Frames(fs.Arg(0)) // the images of a folder, in name order
	if fs.NArg() == 0 {
		img, err := demo.Left()
		frames = func(yield func(dataset.Frame, error) bool) { yield(dataset.Frame{Name: demo.Name, Image: img}, err) }
	}
	for f, err := range frames {
		if err != nil {
			return fmt.Errorf("embed: %w", err)
		}
		e, err := est.Estimate(ctx, f.Image)
		if err != nil {
			return fmt.Errorf("embed: %s: %w", f.Name, err)
		}
		b, near, found := e.Depth.Rect, float32(0), false // nearest valid depth in the central third
		for y := b.Dy() / 3; y < 2*b.Dy()/3; y++ {
			for x := b.Dx() / 3; x < 2*b.Dx()/3; x++ {
				if z, ok := e.Depth.At(x, y); ok && (!found || z < near) {
					near, found = z, true
				}
			}
		}
		if !found {
			fmt.Fprintf(stdout, "%s: no valid depth ahead\n", f.Name)
			continue
		}
		fmt.Fprintf(stdout, "%s: nearest point ahead %.2f m (estimated depth is not a safety-rated sensor)\n", f.Name, near)
	}
	return nil
}
