// Command adaptdrive plays a synthetic drive (by default from a greenhouse
// into a storage room) through a fixed Estimator and one adapted online by
// package model/adapt, and prints the mean end-point error of both per
// block of frames against the drive's exact truth (model/adapt/drive):
//
//	go run ./examples/adaptdrive -legs greenhouse:40,storage:120 -block 10 -plot drive.png
//
// -steps-per-frame steps in the frame loop (reproducible); by default the adapter runs in the
// background at -rate steps/s, as on a robot. -help lists the other modes and flags.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"time"

	"github.com/parallaxdepth/parallax/command"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/model/adapt/drive"
	"github.com/parallaxdepth/parallax/synth"
)

const usage = "usage: adaptdrive [flags]\n\nPlays a synthetic drive with and without online adaptation and prints the EPE per block of frames. Flags:\n\n"

func main() { command.Main(run, os.Interrupt) }

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := command.NewFlagSet("adaptdrive", usage, stderr)
	legs := fs.String("legs", "greenhouse:40,storage:120", "the drive: STYLE:FRAMES legs in driving order, separated by commas")
	seed := fs.Uint64("seed", 1, "random seed of the drive and of the adapter")
	render := &synth.Options{}
	fs.IntVar(&render.Width, "width", 320, "image width in pixels")
	fs.IntVar(&render.Height, "height", 240, "image height in pixels")
	fs.IntVar(&render.Samples, "samples", 1, "anti-aliasing samples per pixel along each axis near edges")
	weights := fs.String("weights", "", "weights file (safetensors); empty means the embedded default one-image weights")
	offline := fs.String("offline", "", "weights file of a third, fixed Estimator whose EPE is printed too (e.g. an offline fine-tune)")
	play := &drive.Options{Render: render}
	fs.IntVar(&play.Block, "block", 10, "frames per printed row")
	ao := &adapt.Options{}
	fs.Float64Var(&ao.StepsPerSecond, "rate", 2, "adaptation steps per second in the background")
	fs.Float64Var(&play.StepsPerFrame, "steps-per-frame", 0, "adaptation steps after each frame in the frame loop instead of the background, may be a fraction (0: background)")
	fs.Float64Var(&ao.LearningRate, "lr", 0, "adaptation learning rate (0: the adapter's default)")
	fs.Float64Var(&play.FPS, "fps", 0, "frames per second of the frame loop, as a camera delivers them (0: as fast as the loop runs)")
	fs.DurationVar(&play.Duration, "duration", 0, "play the drive over and over until this much time has passed (0: once)")
	rssLog := fs.String("rss-log", "", "append the resident memory (MB) to this CSV file at the start, once a minute and at the end")
	plot := fs.String("plot", "", "PNG of the EPE of every frame, fixed and adapted, with the adapter's roll-backs marked")
	write := fs.String("write", "", "write the drive's frames into this folder (layout of package dataset) and exit")
	eval := fs.String("eval", "", "score the weights (-weights) on a drive written by -write into this folder, per block of -block frames, and exit")
	latency := fs.Int("latency", 0, "time this many Estimate calls without and with the adapter in the background, then exit")
	memLimit := fs.Int64("memory-limit", defaultMemoryLimitMiB, "the Go runtime's soft memory limit in MiB (debug.SetMemoryLimit); 0: none; GOMEMLIMIT in the environment takes precedence")
	if help, err := command.Parse(fs, args); help || err != nil {
		return err
	}
	if fs.NArg() != 0 {
		return fmt.Errorf("adaptdrive: unexpected arguments %q", fs.Args())
	}
	if play.Block < 1 || !(play.StepsPerFrame >= 0) || play.FPS < 0 || play.Duration < 0 || *latency < 0 || *memLimit < 0 {
		return errors.New("adaptdrive: -block must be positive and -steps-per-frame, -fps, -duration, -latency and -memory-limit not negative")
	}
	if *memLimit > 0 && os.Getenv("GOMEMLIMIT") == "" {
		defer debug.SetMemoryLimit(debug.SetMemoryLimit(*memLimit << 20)) // the process's limit again after the run
	}
	ls, err := synth.ParseLegs(*legs)
	if err != nil {
		return fmt.Errorf("adaptdrive: -legs: %w", err)
	}
	d := &synth.Drive{Legs: ls, Seed: *seed}
	if *write != "" {
		o := *render
		o.Workers = 2
		if err := synth.WriteDrive(*write, d, &o); err != nil {
			return fmt.Errorf("adaptdrive: %w", err)
		}
		_, err := fmt.Fprintf(stdout, "wrote %d frames to %s\n", d.Frames(), *write)
		return err
	}
	w, err := model.LoadOrDefault(*weights)
	if err != nil {
		return err
	}
	live, err := drive.NewEstimator(w)
	if err != nil {
		return err
	}
	if *eval != "" {
		return printEval(ctx, stdout, live, *eval, play.Block)
	}
	ao.Seed = *seed
	ad, err := adapt.New(live, ao)
	if err != nil {
		return err
	}
	defer ad.Close()
	if *latency > 0 {
		return printLatency(ctx, stdout, d, render, live, ad, *latency, play.FPS, ao.StepsPerSecond)
	}
	fixed, err := drive.NewEstimator(w)
	if err != nil {
		return err
	}
	ests, names := []*model.Estimator{fixed, live}, []string{"fixed weights", "adapted online"}
	if *offline != "" {
		ow, err := model.Load(*offline)
		if err != nil {
			return err
		}
		oe, err := drive.NewEstimator(ow)
		if err != nil {
			return err
		}
		ests, names = append(ests, oe), append(names, "offline fine-tune")
	}
	var mem *rssLogger
	if *rssLog != "" {
		if mem, err = newRSSLogger(*rssLog, time.Minute, ad); err != nil {
			return err
		}
		defer mem.Close()
		play.Frame = mem.Tick
	}
	t := newTable(stdout, play.Duration > 0, len(ests) == 3)
	rec, err := drive.Play(ctx, d, ests, ad, play, t.row)
	if err != nil {
		return err
	}
	if mem != nil {
		if err := mem.Final(); err != nil {
			return err
		}
	}
	t.summary(ad.Status())
	if *plot == "" {
		return nil
	}
	mode := fmt.Sprintf("%.3g steps/s in the background", ao.StepsPerSecond)
	if play.StepsPerFrame > 0 {
		mode = fmt.Sprintf("%.3g steps per frame", play.StepsPerFrame)
	}
	if err := rec.Chart(fmt.Sprintf("online adaptation on the drive %s (%s)", *legs, mode), names).WritePNG(*plot); err != nil {
		return fmt.Errorf("adaptdrive: -plot: %w", err)
	}
	return nil
}
