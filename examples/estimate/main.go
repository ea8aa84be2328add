// Command estimate turns left camera images into metric depth with the
// embedded network (or a weights file): for each image it writes a 16-bit
// depth PNG in millimetres, a colour-mapped depth PNG and a short text
// summary, and on request PFM maps and a PLY point cloud.
//
//	go run ./examples/estimate                       # the bundled demo image
//	go run ./examples/estimate -rig rig.json -flip photos/ left.png
//
// Estimated depth is not a safety-rated sensor.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
	"github.com/parallaxdepth/parallax/progress"
)

const caution = `Caution: estimated depth is not a safety-rated sensor. Its errors grow with distance and it fails
silently on glass, mirrors, textureless or repetitive surfaces, darkness and glare; a machine that
acts on it needs independent obstacle sensing.`

const usage = `usage: estimate [flags] [image or folder ...]

Estimates depth from single left images (PNG or JPEG; folders are read in name
order). Without arguments it runs on the bundled demo image. For each image NAME
it writes into the output folder (-out):

  NAME.depth-mm.png      16-bit grey depth in millimetres, 0 = no estimate
  NAME.depth-colour.png  depth colour-mapped by inverse depth (cubehelix, near is bright)
  NAME.summary.txt       size, time, depth range and median

`

func main() {
	if err := run(context.Background(), os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("estimate", flag.ContinueOnError)
	fs.SetOutput(stderr)
	weights := fs.String("weights", "", "weights file (safetensors, see package model); default: the embedded weights")
	rigPath := fs.String("rig", "", "rig JSON file of the camera (see depth.ReadRig), rescaled to each image's size; an image\nof another aspect ratio (±1%) is an error. Default: the rig of the bundled demo, which the\nembedded weights were made for")
	out := fs.String("out", "parallax-estimates", "output folder, created if missing; files of the same names are replaced")
	flip := fs.Bool("flip", false, "flip post-processing: also predict the mirrored image and blend (twice the time)")
	save := model.SaveOptions{}
	fs.BoolVar(&save.PFM, "pfm", false, "also write NAME.disparity.pfm (pixels), NAME.depth.pfm (metres) and NAME.confidence.pfm")
	fs.BoolVar(&save.PLY, "ply", false, "also write NAME.points.ply, a coloured point cloud in metres (binary little-endian)")
	minConf := fs.Float64("min-confidence", 0, "mark pixels whose left-right confidence is below this value invalid in every output")
	quiet := fs.Bool("quiet", false, "print no progress and no summaries (warnings still go to stderr)")
	fs.Usage = func() { fmt.Fprint(stderr, usage+caution+"\n\nFlags:\n"); fs.PrintDefaults() }
	if err := fs.Parse(args); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return nil
		}
		return fmt.Errorf("estimate: %w", err)
	}
	if *minConf < 0 || *minConf > 1 || *minConf != *minConf {
		return fmt.Errorf("estimate: -min-confidence %v must be in [0, 1]", *minConf)
	}
	inputs, err := dataset.ImageInputs(fs.Args())
	if err != nil {
		return fmt.Errorf("estimate: %w", err)
	}
	w, err := model.LoadOrDefault(*weights)
	if err != nil {
		return err
	}
	rig, err := demo.Rig()
	if *rigPath != "" {
		rig, err = depth.LoadRig(*rigPath)
	} else if len(inputs) > 0 {
		fmt.Fprintf(stderr, "estimate: no -rig given: assuming the demo camera (focal %.1f px at %d px width, baseline %.3f m);\n"+
			"          depth in metres is only right for that camera\n", rig.Fx, rig.Width, rig.Baseline)
	}
	if err != nil {
		return err
	}
	// Without -rig the demo rig is only a guess, already warned about: it is
	// stretched to any image rather than refused.
	est, err := model.NewEstimator(w, &model.EstimatorOptions{Rig: rig, StretchRig: *rigPath == "", Flip: *flip})
	if err != nil {
		return err
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return fmt.Errorf("estimate: %w", err)
	}
	if len(inputs) == 0 {
		inputs = []dataset.ImageInput{{Name: demo.Name}}
	}
	bar := progress.New(stderr, len(inputs), &progress.Options{Unit: "images", Mode: map[bool]progress.Mode{true: progress.Off}[*quiet || len(inputs) == 1]})
	defer bar.Done()
	var first time.Duration
	for i, in := range inputs {
		img, err := demo.Left()
		if in.Path != "" {
			img, err = dataset.LoadImage(in.Path)
		}
		if err != nil {
			return fmt.Errorf("estimate: %w", err)
		}
		start := time.Now()
		e, err := est.Estimate(ctx, img)
		if i == 0 && err == nil { // the first call also sets up buffers: the summary times a second one
			first, start = time.Since(start), time.Now()
			e, err = est.Estimate(ctx, img)
		}
		elapsed := time.Since(start)
		if err != nil {
			return fmt.Errorf("estimate: %s%s: %w", in.Name, map[bool]string{true: " with -rig " + *rigPath}[*rigPath != ""], err)
		}
		e.MaskConfidence(float32(*minConf))
		files, dropped, err := e.Save(filepath.Join(*out, in.Name), img, &save)
		if err != nil {
			return err
		}
		src := map[bool]string{true: "bundled demo image (synthetic greenhouse aisle)", false: in.Path}[in.Path == ""]
		sum := e.Describe(model.EstimateInfo{Source: src, Weights: model.DescribeWeights(w, *weights), Config: w.Config,
			Elapsed: elapsed, First: first, Flip: *flip, Files: append(files, in.Name+".summary.txt"), Dropped: dropped}) + caution + "\n"
		if err := depth.SaveFile(filepath.Join(*out, in.Name+".summary.txt"), []byte(sum)); err != nil {
			return err
		}
		if !*quiet && len(inputs) == 1 {
			fmt.Fprint(stdout, sum)
		}
		bar.Update(i+1, in.Name)
	}
	bar.Done()
	if !*quiet && len(inputs) > 1 {
		fmt.Fprintf(stdout, "%d images estimated\n%s\n", len(inputs), caution)
	}
	if !*quiet {
		fmt.Fprintf(stdout, "output folder: %s\n", *out)
	}
	return nil
}
