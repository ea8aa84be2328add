// Command synth writes a synthetic stereo dataset with exact ground truth:
// rectified left and right images of procedurally generated scenes, the
// disparity of both views, the left depth and occlusion masks, and the rig.
//
//	go run ./examples/synth -style greenhouse -n 100 -seed 1 -out DIR
//
// The folder layout is described in the documentation of package synth.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/progress"
	"github.com/parallaxdepth/parallax/synth"
)

const usage = `usage: synth -out DIR [flags]

Writes rectified stereo pairs of synthetic scenes with exact ground truth into DIR:
rig.json (or rigs/NAME.json for varied pairs), left/, right/ and truth/ (disparity of both views in pixels, left depth
in metres, occlusion masks). Flags:

`

// main stops a run on Ctrl-C after the pairs in progress.
func main() { command.Main(run, os.Interrupt) }

// run parses args and writes the data set; when ctx is done it stops after
// the pairs in progress (each pair's files are complete) with an error.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("synth", usage, stderr)
	styleName := fs.String("style", "greenhouse", "scene style: greenhouse (a rover in a greenhouse aisle), storage (a storage room with shelving), orchard (a ground robot in an orchard alley, 0.3 to 30 m) or workshop (an industrial hall, from its aisle or above a workbench, 0.3 to 30 m)")
	varyName := fs.String("vary", "default", "per-pair randomisation: all (rig, colours, textures, light, exposure, blur, noise, gain difference, vertical misalignment; a rig per pair in rigs/), none, or default (none for greenhouse and storage, all for the others)")
	n := fs.Int("n", 8, "number of stereo pairs to write")
	seed := fs.Uint64("seed", 1, "random seed; the same seed, style, size and samples give byte-identical files")
	out := fs.String("out", "", "output folder, created if missing; pairs with the same names are replaced, and a folder holding a dataset of another rig is refused")
	opt := &synth.Options{}
	fs.IntVar(&opt.Width, "width", synth.DefaultWidth, "image width in pixels; the focal length scales with it")
	fs.IntVar(&opt.Height, "height", synth.DefaultHeight, "image height in pixels")
	fs.IntVar(&opt.Samples, "samples", synth.DefaultSamples, fmt.Sprintf("anti-aliasing samples per pixel along each axis near edges (1 to %d)", synth.MaxSamples))
	fs.IntVar(&opt.Workers, "workers", runtime.GOMAXPROCS(0), "pairs rendered at once; does not change the output")
	quiet := fs.Bool("quiet", false, "do not print progress")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	switch {
	case fs.NArg() > 0:
		return fmt.Errorf("synth: unexpected argument %q (flags only; see -help)", fs.Arg(0))
	case *out == "":
		return errors.New("synth: -out DIR is required (see -help)")
	case *n < 1:
		return fmt.Errorf("synth: -n %d: want at least one pair", *n)
	case opt.Width < 2 || opt.Height < 1:
		return fmt.Errorf("synth: -width %d -height %d: the image must be at least 2×1 pixels", opt.Width, opt.Height)
	case opt.Workers < 1:
		return fmt.Errorf("synth: -workers %d: want at least 1", opt.Workers)
	}
	style, err := synth.ParseStyle(*styleName)
	if err != nil {
		return err
	}
	if opt.Vary, err = synth.ParseVariation(*varyName); err != nil {
		return err
	}
	bar := progress.New(stderr, *n, &progress.Options{Unit: "pairs", Label: style.String(), Mode: map[bool]progress.Mode{true: progress.Off}[*quiet]})
	opt.Progress = func(done, _ int) { bar.Update(done, "") }
	err = synth.WriteDatasetContext(ctx, *out, style, *seed, *n, opt)
	bar.Done()
	if err != nil {
		return err
	}
	if !*quiet {
		fmt.Fprintf(stdout, "wrote %d %s pairs of %dx%d to %s\n", *n, style, opt.Width, opt.Height, *out)
	}
	return nil
}
