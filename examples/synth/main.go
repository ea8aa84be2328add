// Command synth writes a synthetic stereo dataset with exact ground truth:
// rectified left and right images of procedurally generated scenes, the
// disparity of both views, the left depth and occlusion masks, and the rig.
//
//	go run ./examples/synth -style greenhouse -n 100 -seed 1 -out DIR
//
// The folder layout is described in the documentation of package synth.
package main

import (
	"flag"
	"fmt"
	"os"
	"runtime"
	"time"

	"github.com/parallaxdepth/parallax/synth"
)

func main() {
	style := flag.String("style", "greenhouse", "scene style: greenhouse (a rover in a greenhouse aisle), storage (a storage room with shelving), orchard (a ground robot in an orchard alley, 0.3 to 30 m) or workshop (an industrial hall, from its aisle or above a workbench, 0.3 to 30 m)")
	vary := flag.String("vary", "default", "per-pair randomisation: all (rig, colours, textures, light, exposure, blur, noise, gain difference, vertical misalignment; a rig per pair in rigs/), none, or default (none for greenhouse and storage, all for the others)")
	n := flag.Int("n", 8, "number of stereo pairs to write")
	seed := flag.Uint64("seed", 1, "random seed; the same seed, style, size and samples give byte-identical files")
	out := flag.String("out", "", "output folder, created if missing; pairs with the same names are replaced, and a folder holding a dataset of another rig is refused")
	width := flag.Int("width", synth.DefaultWidth, "image width in pixels; the focal length scales with it")
	height := flag.Int("height", synth.DefaultHeight, "image height in pixels")
	samples := flag.Int("samples", synth.DefaultSamples, fmt.Sprintf("anti-aliasing samples per pixel along each axis near edges (1 to %d)", synth.MaxSamples))
	workers := flag.Int("workers", runtime.GOMAXPROCS(0), "pairs rendered at once; does not change the output")
	quiet := flag.Bool("quiet", false, "do not print progress")
	flag.Usage = func() {
		fmt.Fprintf(flag.CommandLine.Output(), "usage: synth -out DIR [flags]\n\nWrites rectified stereo pairs of synthetic scenes with exact ground truth into DIR:\nrig.json (or rigs/NAME.json for varied pairs), left/, right/ and truth/ (disparity of both views in pixels, left depth\nin metres, occlusion masks). Flags:\n\n")
		flag.PrintDefaults()
	}
	flag.Parse()
	if err := run(*style, *vary, *n, *seed, *out, *width, *height, *samples, *workers, *quiet); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

func run(styleName, varyName string, n int, seed uint64, out string, width, height, samples, workers int, quiet bool) error {
	if flag.NArg() > 0 {
		return fmt.Errorf("synth: unexpected argument %q (flags only; see -help)", flag.Arg(0))
	}
	if out == "" {
		return fmt.Errorf("synth: -out DIR is required (see -help)")
	}
	if n < 1 {
		return fmt.Errorf("synth: -n %d: want at least one pair", n)
	}
	if width < 2 || height < 1 {
		return fmt.Errorf("synth: -width %d -height %d: the image must be at least 2×1 pixels", width, height)
	}
	if workers < 1 {
		return fmt.Errorf("synth: -workers %d: want at least 1", workers)
	}
	style, err := synth.ParseStyle(styleName)
	if err != nil {
		return err
	}
	vary, err := synth.ParseVariation(varyName)
	if err != nil {
		return err
	}
	start := time.Now()
	last := time.Time{}
	printed := false
	opt := &synth.Options{Width: width, Height: height, Samples: samples, Workers: workers, Vary: vary}
	if !quiet {
		opt.Progress = func(done, total int) {
			if now := time.Now(); done == total || now.Sub(last) > 500*time.Millisecond {
				last, printed = now, true
				fmt.Fprintf(os.Stderr, "\r%s: %d/%d pairs, %.1fs", style, done, total, now.Sub(start).Seconds())
			}
		}
	}
	if err := synth.WriteDataset(out, style, seed, n, opt); err != nil {
		if printed {
			fmt.Fprintln(os.Stderr)
		}
		return err
	}
	if !quiet {
		fmt.Fprintf(os.Stderr, "\nwrote %d %s pairs of %dx%d to %s\n", n, style, width, height, out)
	}
	return nil
}
