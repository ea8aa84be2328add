package main

import (
	"context"
	"fmt"
	"io"
	"time"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/model/adapt/drive"
	"github.com/parallaxdepth/parallax/synth"
)

// defaultMemoryLimitMiB is -memory-limit's default: the default run holds
// about 380 MB live (two Estimators and the adapter at 320×240), and with
// 440 MiB the process stayed at 413.6–426.9 MB resident over 30 minutes
// while the collector took 0.7 % of the CPU (on a loaded machine that
// delivered 3.9 of the 10 frames/s asked for; at a full 10 frames/s the
// collector runs more often); without a limit it grows towards twice the
// live heap (761 MB after 6 minutes). See the README's memory figures. The
// limit holds for the run only (also for -latency, whose figures include
// the collector's work under it).
const defaultMemoryLimitMiB = 440

// table prints one row per block: frames, style, the EPE of each
// Estimator, swaps and refusals, and with timed set the elapsed seconds
// first.
type table struct {
	w              io.Writer
	timed, offline bool
}

func newTable(w io.Writer, timed, offline bool) *table {
	t := &table{w: w, timed: timed, offline: offline}
	off := ""
	if offline {
		off = fmt.Sprintf(" %12s", "EPE offline")
	}
	fmt.Fprintf(w, "%s%-9s %-10s %12s %12s%s %6s %8s\n", t.time("time_s"), "frames", "style", "EPE fixed", "EPE adapted", off, "swaps", "refused")
	return t
}

func (t *table) time(s string) string {
	if !t.timed {
		return ""
	}
	return fmt.Sprintf("%8s ", s)
}

func (t *table) row(b drive.Block) error {
	off := ""
	if t.offline {
		off = fmt.Sprintf(" %12.3f", b.EPE[2])
	}
	_, err := fmt.Fprintf(t.w, "%s%-9s %-10s %12.3f %12.3f%s %6d %8d\n", t.time(fmt.Sprintf("%.0f", b.Elapsed.Seconds())), fmt.Sprintf("%d-%d", b.First, b.Last),
		b.Style, b.EPE[0], b.EPE[1], off, b.Status.Swaps, b.Status.Refused)
	return err
}

func (t *table) summary(s adapt.Status) {
	fmt.Fprintf(t.w, "adapter: %d steps, %d checks, %d swaps, %d refused, %d roll-backs, %d fall-backs to the starting weights\n", s.Steps, s.Checks, s.Swaps, s.Refused, s.Rollbacks, s.Fallbacks)
	if s.Paused {
		fmt.Fprintf(t.w, "adapter paused: %s\n", s.Reason)
	} else if s.Refused > 0 {
		fmt.Fprintf(t.w, "last refusal: %s (drift %.4g)\n", s.Reason, s.Drift)
	}
}

// printLatency runs drive.Latency and prints the median and 90th
// percentile without and while adapting, and their ratios.
func printLatency(ctx context.Context, w io.Writer, d *synth.Drive, render *synth.Options, e *model.Estimator, ad *adapt.Adapter, calls int, fps, rate float64) error {
	without, with, err := drive.Latency(ctx, d, render, e, ad, calls, fps)
	if err != nil {
		return err
	}
	ms := func(d time.Duration) float64 { return d.Seconds() * 1000 }
	m0, m1 := drive.Percentile(without, 0.5), drive.Percentile(with, 0.5)
	p0, p1 := drive.Percentile(without, 0.9), drive.Percentile(with, 0.9)
	fmt.Fprintf(w, "Estimate at %dx%d, %d calls each at %.3g frames/s (0: unpaced), adapter at %.3g steps/s (%d steps taken)\n", render.Width, render.Height, calls, fps, rate, ad.Status().Steps)
	fmt.Fprintf(w, "without adaptation: median %.1f ms, 90th percentile %.1f ms\n", ms(m0), ms(p0))
	fmt.Fprintf(w, "while adapting:     median %.1f ms, 90th percentile %.1f ms\n", ms(m1), ms(p1))
	fmt.Fprintf(w, "ratio of medians %.2f, of 90th percentiles %.2f (target ≤ 1.5)\n", float64(m1)/float64(m0), float64(p1)/float64(p0))
	return nil
}

// printEval scores e on the drive written into dir (-write), per block of
// frames and over all of them.
func printEval(ctx context.Context, w io.Writer, e *model.Estimator, dir string, block int) error {
	set, err := dataset.Open(dir)
	if err != nil {
		return fmt.Errorf("adaptdrive: -eval: %w", err)
	}
	fmt.Fprintf(w, "%-15s %12s\n", "frames", "EPE")
	mean, err := drive.ScoreSet(ctx, e, set, block, func(first, last string, m float64) error {
		_, err := fmt.Fprintf(w, "%-15s %12.3f\n", first+"-"+last, m)
		return err
	})
	if err != nil {
		return fmt.Errorf("adaptdrive: -eval: %w", err)
	}
	_, err = fmt.Fprintf(w, "%d frames: mean EPE %.3f px\n", len(set.Pairs), mean)
	return err
}
