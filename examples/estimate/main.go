// Command estimate turns left images (one-image network) or rectified pairs
// (-stereo: stereo network; -method sgm: classical matcher) into metric depth:
// a 16-bit depth PNG in millimetres, a colour-mapped PNG, a text summary, and
// on request PFM maps and a PLY. Estimated depth is not a safety-rated sensor.
//
//	go run ./examples/estimate                       # the bundled demo image
//	go run ./examples/estimate -rig rig.json -flip photos/ left.png
//	go run ./examples/estimate -stereo -rig rig.json left.png right.png pairs/
//	go run ./examples/estimate -method sgm -fill-holes -rig rig.json pairs/
package main

import (
	"cmp"
	"context"
	"errors"
	"fmt"
	"image"
	"io"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/demo"
	"github.com/parallaxdepth/parallax/model/evaluation"
	"github.com/parallaxdepth/parallax/progress"
)

const usage = `usage: estimate [flags] [image or folder ...]
       estimate -stereo|-method sgm [flags] LEFT RIGHT | folder with left/ and right/ ...

Estimates depth from single left images (PNG or JPEG; folders in name order), or with -stereo or
-method sgm from rectified pairs (LEFT RIGHT files, or folders with left/ and right/ views of the
same names). No arguments: the demo image. For each image or left view NAME it writes into -out:

  NAME.depth-mm.png      16-bit grey depth in millimetres, 0 = no estimate
  NAME.depth-colour.png  depth colour-mapped by inverse depth (cubehelix, near is bright)
  NAME.summary.txt       size, time, depth range and median, notes such as an assumed rig

`

func main() { command.Main(run) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("estimate", usage+model.Caution+"\n\nFlags:\n", stderr)
	method := fs.String("method", "network", "network (the weights) or sgm (semi-global matching of pairs, package sgm; no weights)")
	stereo := fs.Bool("stereo", false, "the inputs are rectified pairs and the weights stereo weights (default: the embedded stereo weights)")
	weights := fs.String("weights", "", "weights file (safetensors, see package model), of the kind the inputs ask for; default: the\nembedded one-image weights, or the embedded stereo weights with -stereo")
	rigPath := fs.String("rig", "", "rig JSON file of the camera (see depth.ReadRig), rescaled to each image's size; an image\nof another aspect ratio (±1%) is an error. Default: the pairs' rig (their folders' rig.json or\nrigs/NAME.json) if all have the same; else the rig of the bundled demo, which the embedded weights\nwere made for, stretched to any image (said in every summary)")
	out := fs.String("out", "parallax-estimates", "output folder, created if missing; files of the same names are replaced")
	flip := fs.Bool("flip", false, "flip post-processing of one-image weights: also predict the mirrored image and blend (twice the time)")
	fill := fs.Bool("fill-holes", false, "with -method sgm: fill the matcher's holes along the scan line (filled pixels get confidence 0)")
	maxShift := fs.Float64("max-row-shift", depth.DefaultMaxRowShift, "refuse a pair whose views are more than this many pixels apart vertically (not rectified;\nmeasured from row profiles, see depth.VerticalShift); 0: no check")
	save := model.SaveOptions{}
	fs.BoolVar(&save.PFM, "pfm", false, "also write NAME.disparity.pfm (pixels), NAME.depth.pfm (metres) and NAME.confidence.pfm")
	fs.BoolVar(&save.PLY, "ply", false, "also write NAME.points.ply, a coloured point cloud in metres (binary little-endian)")
	fs.BoolVar(&save.OrganizedPLY, "ply-grid", false, "write the PLY (as -ply) with one point per pixel in row order, NaN where invalid (an organised cloud)")
	minConf := fs.Float64("min-confidence", model.DefaultMinConfidence, "networks: mark pixels whose left-right confidence is below this value invalid in every\noutput (it replaces the library's default; 0: keep every confidence; -method sgm has its own checks)")
	quiet := fs.Bool("quiet", false, "print no progress and no summaries (warnings, such as an assumed rig, still go to stderr)")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	pairs, sgm := *stereo || *method == "sgm", *method == "sgm"
	if *minConf < 0 || *minConf > 1 || *minConf != *minConf || *maxShift < 0 || (sgm && *weights != "") {
		return fmt.Errorf("estimate: -min-confidence %v must be in [0, 1], -max-row-shift %v not negative; -method sgm takes no -weights", *minConf, *maxShift)
	}
	save.PLY = save.PLY || save.OrganizedPLY
	inputs, err := dataset.Inputs(fs.Args(), pairs)
	if err != nil || (pairs && len(inputs) == 0) {
		return fmt.Errorf("estimate: %w", cmp.Or(err, errors.New("-stereo and -method sgm need pairs: two files LEFT RIGHT, or a folder with left/ and right/")))
	}
	w, info := (*model.Weights)(nil), model.EstimateInfo{Flip: *flip, Method: evaluation.SGMTitle + ", holes " + map[bool]string{true: "filled along the scan line (confidence 0)", false: "left without estimate"}[*fill]}
	if !sgm {
		if w, err = model.LoadKind(*weights, pairs); err != nil {
			return fmt.Errorf("estimate: %w (-stereo goes with stereo weights, single images with one-image weights)", err)
		}
		info.Weights, info.Method = model.DescribeWeights(w, *weights), ""
	}
	rig, rigErr := dataset.SharedRig(inputs), error(nil) // the folders' rig, if every pair has the same
	if *rigPath != "" {
		rig, rigErr = depth.LoadRig(*rigPath)
	} else if rig == nil {
		if rig, rigErr = demo.Rig(); rigErr == nil && len(inputs) > 0 {
			info.Notes = []string{fmt.Sprintf("NO RIG GIVEN: metric depth assumes the demo camera (focal %.1f px at %d px width, baseline %.3f m)\n"+
				"             stretched to each image: depth in metres is only right for that camera", rig.Fx, rig.Width, rig.Baseline)}
			fmt.Fprintf(stderr, "estimate: %s (said in every summary; give -rig)\n", info.Notes[0])
		}
	}
	m, err := evaluation.NewMethod(*method, w, &evaluation.MethodOptions{Rig: rig, Depth: true, StretchRig: info.Notes != nil, Flip: *flip, FillHoles: *fill,
		Validity: model.ValidityOptions{MinConfidence: cmp.Or(*minConf, model.ValidityOff)}})
	if err = cmp.Or(rigErr, err); err == nil {
		err = os.MkdirAll(*out, 0o755)
	}
	if err != nil {
		return fmt.Errorf("estimate: %w", err)
	}
	if len(inputs) == 0 {
		inputs = []dataset.PairFiles{{Name: demo.Name}}
	}
	print, unit := map[bool]io.Writer{true: io.Discard, false: stdout}[*quiet], map[bool]string{true: "pairs", false: "images"}[pairs]
	bar := progress.New(stderr, len(inputs), &progress.Options{Unit: unit, Mode: map[bool]progress.Mode{true: progress.Off}[*quiet || len(inputs) == 1]})
	defer bar.Done()
	for i, in := range inputs {
		info.Source = map[bool]string{true: "bundled demo image (synthetic greenhouse aisle)", false: strings.TrimSuffix(in.Left+" + "+in.Right, " + ")}[in.Left == ""]
		left, right, err := image.Image(nil), image.Image(nil), error(nil)
		if left, err = demo.Left(); in.Left != "" {
			left, right, err = in.Load()
		}
		if err == nil && right != nil && *maxShift > 0 {
			err = depth.CheckRectified(left, right, *maxShift)
		}
		if err != nil {
			return fmt.Errorf("estimate: %s: %w", info.Source, err)
		}
		start := time.Now()
		e, err := m.EstimatePair(ctx, left, right)
		if i == 0 && err == nil { // the first call also sets up buffers: the summary times a second one
			info.First, start = time.Since(start), time.Now()
			e, err = m.EstimatePair(ctx, left, right)
		}
		if info.Elapsed = time.Since(start); err != nil {
			return fmt.Errorf("estimate: %s%s: %w", in.Name, map[bool]string{true: " with -rig " + *rigPath}[*rigPath != ""], err)
		}
		sum, err := e.SaveWithSummary(filepath.Join(*out, in.Name), left, &save, info)
		if err != nil {
			return err
		}
		if len(inputs) == 1 {
			fmt.Fprint(print, sum)
		}
		bar.Update(i+1, in.Name)
	}
	bar.Done()
	if len(inputs) > 1 {
		fmt.Fprintf(print, "%d %s estimated\n%s\n", len(inputs), unit, model.Caution)
	}
	fmt.Fprintf(print, "output folder: %s\n", *out)
	return nil
}
