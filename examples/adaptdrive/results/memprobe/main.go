// Command memprobe prints the resident memory and the live heap (after a
// garbage collection) of an Estimator and an Adapter as they are built
// and used on storage-room drive frames at 320×240: where the memory of
// an adapting process goes. Its output of 2026-12-02 is output.txt.
//
//	go run ./examples/adaptdrive/results/memprobe
package main

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"runtime"
	"runtime/metrics"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/model/adapt/drive"
	"github.com/parallaxdepth/parallax/synth"
)

func main() {
	if err := run(); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

// report prints what is resident (VmRSS) and live after a collection.
func report(what string) {
	runtime.GC()
	s := []metrics.Sample{{Name: "/gc/heap/live:bytes"}}
	metrics.Read(s)
	rss := "?"
	if b, err := os.ReadFile("/proc/self/status"); err == nil {
		for line := range bytes.Lines(b) {
			if v, ok := bytes.CutPrefix(line, []byte("VmRSS:")); ok {
				rss = string(bytes.TrimSpace(v))
			}
		}
	}
	fmt.Printf("%-40s RSS %s, live heap %.1f MB\n", what, rss, float64(s[0].Value.Uint64())/1e6)
}

func run() error {
	ctx := context.Background()
	report("start")
	w, err := model.Default()
	if err != nil {
		return err
	}
	est, err := drive.NewEstimator(w)
	if err != nil {
		return err
	}
	d := &synth.Drive{Legs: []synth.Leg{{Style: synth.Storage, Frames: 40}}, Seed: 1}
	render := &synth.Options{Width: 320, Height: 240}
	p, err := synth.GenerateFrame(d, 0, render)
	if err != nil {
		return err
	}
	left := p.Left.ToNRGBA(0)
	if _, err := est.Estimate(ctx, left); err != nil {
		return err
	}
	report("estimator, one call at 320x240")
	errs := make(chan error, 2)
	for range 2 {
		go func() { _, err := est.Estimate(ctx, left); errs <- err }()
	}
	if err := errorsOf(<-errs, <-errs); err != nil {
		return err
	}
	report("estimator, two concurrent calls")
	ad, err := adapt.New(est, nil)
	if err != nil {
		return err
	}
	defer ad.Close()
	report("adapter built (its graph: at the first pair)")
	for f := range d.Frames() {
		p, err := synth.GenerateFrame(d, f, render)
		if err != nil {
			return err
		}
		if err := ad.Offer(p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)); err != nil {
			return err
		}
		if err := ad.Step(ctx); err != nil && err != adapt.ErrTooFewFrames {
			return err
		}
	}
	s := ad.Status()
	report(fmt.Sprintf("after %d frames, %d steps, %d checks", d.Frames(), s.Steps, s.Checks))
	return nil
}

func errorsOf(a, b error) error {
	if a != nil {
		return a
	}
	return b
}
