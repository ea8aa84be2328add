// Command adaptdrive plays a synthetic drive (by default from a greenhouse
// into a storage room) through two Estimators with the same starting
// weights: one fixed, one adapted online by package model/adapt from the
// stream itself, and prints the mean end-point error of both over each
// block of frames against the drive's exact ground truth.
//
//	go run ./examples/adaptdrive -legs greenhouse:40,storage:120 -block 10 -plot drive.png
//
// With -steps-per-frame N the adapter takes N steps after each frame in the
// frame loop (reproducible: the same flags give the same figures; N may be
// a fraction, 0.2 is a step every fifth frame); with the default 0 it runs
// in the background at -rate steps per second, as on a robot, and the
// figures depend on the machine's speed. -plot draws the EPE of every
// frame with the adapter's roll-backs marked. -offline W adds a third
// Estimator running the weights W (say, an offline fine-tune on the same
// frames: -write DIR writes the drive in the layout of package dataset
// and exits).
//
// -fps paces the frame loop like a camera; -duration plays the drive over
// and over until that much time has passed, and -rss-log appends the
// process's resident memory to a file once a minute (the long-run memory
// measurement of issue 14):
//
//	nice -n 10 go run ./examples/adaptdrive -duration 30m -fps 10 -rss-log rss.csv > drive.txt
//
// -latency N times N Estimate calls of the adapted Estimator at -fps
// without the adapter and then N with the adapter running in the
// background, and prints both and their ratio (measure on an idle
// machine; see examples/adaptdrive/measure.sh).
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"image"
	"image/color"
	"io"
	"os"
	"os/signal"
	"time"

	"github.com/parallaxdepth/parallax/chart"
	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/synth"
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		fmt.Fprintln(os.Stderr, err)
		os.Exit(1)
	}
}

// config holds the flags.
type config struct {
	legs                   string
	seed                   uint64
	width, height, samples int
	weights, offline       string
	block                  int
	rate, perFrame, lr     float64
	fps                    float64
	duration               time.Duration
	rssLog, plot, write    string
	eval                   string
	latency                int
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("adaptdrive", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var c config
	fs.StringVar(&c.legs, "legs", "greenhouse:40,storage:120", "the drive: STYLE:FRAMES legs in driving order, separated by commas")
	fs.Uint64Var(&c.seed, "seed", 1, "random seed of the drive and of the adapter")
	fs.IntVar(&c.width, "width", 320, "image width in pixels")
	fs.IntVar(&c.height, "height", 240, "image height in pixels")
	fs.IntVar(&c.samples, "samples", 1, "anti-aliasing samples per pixel along each axis near edges")
	fs.StringVar(&c.weights, "weights", "", "weights file (safetensors); empty means the embedded default one-image weights")
	fs.StringVar(&c.offline, "offline", "", "weights file of a third, fixed Estimator whose EPE is printed too (e.g. an offline fine-tune)")
	fs.IntVar(&c.block, "block", 10, "frames per printed row")
	fs.Float64Var(&c.rate, "rate", 2, "adaptation steps per second in the background")
	fs.Float64Var(&c.perFrame, "steps-per-frame", 0, "adaptation steps after each frame in the frame loop instead of the background, may be a fraction (0: background)")
	fs.Float64Var(&c.lr, "lr", 0, "adaptation learning rate (0: the adapter's default)")
	fs.Float64Var(&c.fps, "fps", 0, "frames per second of the frame loop, as a camera delivers them (0: as fast as the loop runs)")
	fs.DurationVar(&c.duration, "duration", 0, "play the drive over and over until this much time has passed (0: once)")
	fs.StringVar(&c.rssLog, "rss-log", "", "append the resident memory (MB) to this CSV file at the start, once a minute and at the end")
	fs.StringVar(&c.plot, "plot", "", "PNG of the EPE of every frame, fixed and adapted, with the adapter's roll-backs marked")
	fs.StringVar(&c.write, "write", "", "write the drive's frames into this folder (layout of package dataset) and exit")
	fs.StringVar(&c.eval, "eval", "", "score the weights (-weights) on the frames of a drive written by -write into this folder, with the\nsame EPE per block of -block frames, and exit (no adaptation)")
	fs.IntVar(&c.latency, "latency", 0, "time this many Estimate calls without and with the adapter in the background, then exit")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() != 0 {
		return fmt.Errorf("adaptdrive: unexpected arguments %q", fs.Args())
	}
	if c.block < 1 || !(c.perFrame >= 0) || c.fps < 0 || c.duration < 0 || c.latency < 0 {
		return errors.New("adaptdrive: -block must be positive and -steps-per-frame, -fps, -duration and -latency not negative")
	}
	ls, err := synth.ParseLegs(c.legs)
	if err != nil {
		return fmt.Errorf("adaptdrive: -legs: %w", err)
	}
	d := &synth.Drive{Legs: ls, Seed: c.seed}
	render := &synth.Options{Width: c.width, Height: c.height, Samples: c.samples}
	if c.write != "" {
		o := *render
		o.Workers = 2
		if err := synth.WriteDrive(c.write, d, &o); err != nil {
			return fmt.Errorf("adaptdrive: %w", err)
		}
		fmt.Fprintf(stdout, "wrote %d frames to %s\n", d.Frames(), c.write)
		return nil
	}
	w, err := model.LoadOrDefault(c.weights)
	if err != nil {
		return err
	}
	opts := &model.EstimatorOptions{Validity: model.ValidityOptions{MinConfidence: model.ValidityOff, MinTexture: model.ValidityOff}}
	if c.eval != "" {
		return evalFrames(ctx, c, w, opts, stdout)
	}
	live, err := model.NewEstimator(w, opts)
	if err != nil {
		return err
	}
	ad, err := adapt.New(live, &adapt.Options{StepsPerSecond: c.rate, Seed: c.seed, LearningRate: c.lr})
	if err != nil {
		return err
	}
	defer ad.Close()
	if c.latency > 0 {
		return measureLatency(ctx, c, d, render, live, ad, stdout)
	}
	fixed, err := model.NewEstimator(w, opts)
	if err != nil {
		return err
	}
	var offline *model.Estimator
	if c.offline != "" {
		ow, err := model.Load(c.offline)
		if err != nil {
			return err
		}
		if offline, err = model.NewEstimator(ow, opts); err != nil {
			return err
		}
	}
	bg, cancel := context.WithCancel(ctx)
	done := make(chan error, 1)
	if c.perFrame == 0 {
		go func() { done <- ad.Run(bg) }()
	} else {
		close(done)
	}
	defer func() { cancel(); <-done }()

	timeCol := func(string) string { return "" } // the elapsed time, only for runs of a set -duration
	if c.duration > 0 {
		timeCol = func(s string) string { return fmt.Sprintf("%8s ", s) }
	}
	offCol := func(string) string { return "" }
	if offline != nil {
		offCol = func(s string) string { return fmt.Sprintf(" %12s", s) }
	}
	fmt.Fprintf(stdout, "%s%-9s %-10s %12s %12s%s %6s %8s\n", timeCol("time_s"), "frames", "style", "EPE fixed", "EPE adapted", offCol("EPE offline"), "swaps", "refused")
	var mem *rssLogger
	if c.rssLog != "" {
		if mem, err = newRSSLogger(c.rssLog, time.Minute); err != nil {
			return err
		}
		defer mem.Close()
	}
	status := func() (int, int, int) { s := ad.Status(); return s.Steps, s.Swaps, s.Rollbacks }
	var rec record
	var sum [3]float64
	n := 0
	began := time.Now()
	pace := newPacer(c.fps)
	frames := d.Frames()
	owed := 0.0 // steps due in the frame loop
	for i := 0; ; i++ {
		f := i % frames
		if (c.duration == 0 && i == frames) || (c.duration > 0 && time.Since(began) >= c.duration) || ctx.Err() != nil {
			break
		}
		pace.wait()
		if mem != nil {
			if err := mem.Tick(i, status); err != nil {
				return err
			}
		}
		p, err := synth.GenerateFrame(d, f, render)
		if err != nil {
			return err
		}
		left, right := p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)
		truth, err := truthOf(p)
		if err != nil {
			return err
		}
		var e [3]float64
		for k, est := range []*model.Estimator{fixed, live, offline} {
			if est != nil {
				if e[k], err = epe(ctx, est, left, right, truth); err != nil {
					return err
				}
			}
		}
		if err := ad.Offer(left, right); err != nil {
			return err
		}
		for owed += c.perFrame; owed >= 1; owed-- {
			if err := ad.Step(ctx); err != nil && !errors.Is(err, adapt.ErrTooFewFrames) && !errors.Is(err, adapt.ErrPaused) {
				return err
			}
		}
		s := ad.Status()
		rec.add(i, e, s.Rollbacks)
		for k := range sum {
			sum[k] += e[k]
		}
		n++
		leg, _, _ := d.Leg(f)
		nextLeg, _, _ := d.Leg((f + 1) % frames)
		if n == c.block || f == frames-1 || nextLeg != leg {
			off := ""
			if offline != nil {
				off = fmt.Sprintf(" %12.3f", sum[2]/float64(n))
			}
			fmt.Fprintf(stdout, "%s%-9s %-10s %12.3f %12.3f%s %6d %8d\n", timeCol(fmt.Sprintf("%.0f", time.Since(began).Seconds())), fmt.Sprintf("%d-%d", f+1-n, f),
				ls[leg].Style, sum[0]/float64(n), sum[1]/float64(n), off, s.Swaps, s.Refused)
			sum, n = [3]float64{}, 0
		}
	}
	if mem != nil {
		if err := mem.Final(status); err != nil {
			return err
		}
	}
	s := ad.Status()
	fmt.Fprintf(stdout, "adapter: %d steps, %d checks, %d swaps, %d refused, %d roll-backs\n", s.Steps, s.Checks, s.Swaps, s.Refused, s.Rollbacks)
	if s.Paused {
		fmt.Fprintf(stdout, "adapter paused: %s\n", s.Reason)
	} else if s.Refused > 0 {
		fmt.Fprintf(stdout, "last refusal: %s (drift %.4g)\n", s.Reason, s.Drift)
	}
	if c.plot != "" {
		if err := rec.chart(c, d, offline != nil).WritePNG(c.plot); err != nil {
			return fmt.Errorf("adaptdrive: -plot: %w", err)
		}
	}
	return nil
}

// pacer spaces frames as a camera at fps would deliver them (no pacing
// for fps 0); a slow frame is not caught up with a burst.
type pacer struct {
	interval time.Duration
	next     time.Time
}

func newPacer(fps float64) *pacer {
	p := &pacer{next: time.Now()}
	if fps > 0 {
		p.interval = time.Duration(float64(time.Second) / fps)
	}
	return p
}

func (p *pacer) wait() {
	if p.interval == 0 {
		return
	}
	if w := time.Until(p.next); w > 0 {
		time.Sleep(w)
	}
	p.next = p.next.Add(p.interval)
	if now := time.Now(); p.next.Before(now) {
		p.next = now
	}
}

// record keeps the EPE of every frame played and the frames at which
// the adapter rolled back.
type record struct {
	frame     []float64
	epe       [3][]float64
	rollbacks []float64
	lastRB    int
}

func (r *record) add(i int, e [3]float64, rollbacks int) {
	r.frame = append(r.frame, float64(i))
	for k := range e {
		r.epe[k] = append(r.epe[k], e[k])
	}
	for ; r.lastRB < rollbacks; r.lastRB++ {
		r.rollbacks = append(r.rollbacks, float64(i))
	}
}

// The plot's colours (our own): fixed in grey, adapted in blue, offline in
// green, roll-backs in red.
var (
	fixedColor    = color.NRGBA{120, 120, 120, 255}
	adaptedColor  = color.NRGBA{30, 80, 200, 255}
	offlineColor  = color.NRGBA{40, 150, 60, 255}
	rollbackColor = color.NRGBA{220, 60, 50, 255}
)

// chart draws the EPE of every frame.
func (r *record) chart(c config, d *synth.Drive, offline bool) *chart.Chart {
	mode := fmt.Sprintf("%.3g steps/s in the background", c.rate)
	if c.perFrame > 0 {
		mode = fmt.Sprintf("%.3g steps per frame", c.perFrame)
	}
	ch := &chart.Chart{
		Title:  fmt.Sprintf("online adaptation on the drive %s (%s)", c.legs, mode),
		XLabel: "frame", YLabel: "end-point error (px)",
		Series: []chart.Series{
			{Name: "fixed weights", X: r.frame, Y: r.epe[0], Color: fixedColor, Width: 2},
			{Name: "adapted online", X: r.frame, Y: r.epe[1], Color: adaptedColor, Width: 2},
		},
		MarkName: "roll-back",
	}
	if offline {
		ch.Series = append(ch.Series, chart.Series{Name: "offline fine-tune", X: r.frame, Y: r.epe[2], Color: offlineColor, Width: 2})
	}
	for _, x := range r.rollbacks {
		ch.Marks = append(ch.Marks, chart.Mark{X: x, Color: rollbackColor})
	}
	return ch
}

// evalFrames scores weights w on the frames of the drive written into
// c.eval, printing the mean EPE of every block of c.block frames (by
// name) and of all of them.
func evalFrames(ctx context.Context, c config, w *model.Weights, opts *model.EstimatorOptions, stdout io.Writer) error {
	set, err := dataset.Open(c.eval)
	if err != nil {
		return fmt.Errorf("adaptdrive: -eval: %w", err)
	}
	est, err := model.NewEstimator(w, opts)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%-15s %12s\n", "frames", "EPE")
	var sum, total float64
	first, n := "", 0
	for i := range set.Pairs {
		r, err := set.Read(i)
		if err != nil {
			return fmt.Errorf("adaptdrive: -eval: %w", err)
		}
		if r.DispLeft == nil {
			return fmt.Errorf("adaptdrive: -eval: %s has no truth/disp_left", r.Name)
		}
		gt, err := depth.NewDisparity(r.DispLeft.Rect)
		if err != nil {
			return err
		}
		for k, v := range r.DispLeft.Pix {
			if v > 0 && r.DispLeft.Mask[k] != 0 { // as truthOf: positive truth only
				gt.Pix[k], gt.Mask[k] = v, 1
			}
		}
		e, err := epe(ctx, est, r.Left, r.Right, gt)
		if err != nil {
			return fmt.Errorf("adaptdrive: -eval: %s: %w", r.Name, err)
		}
		if n == 0 {
			first = r.Name
		}
		sum, total, n = sum+e, total+e, n+1
		if n == c.block || i == len(set.Pairs)-1 {
			fmt.Fprintf(stdout, "%-15s %12.3f\n", first+"-"+r.Name, sum/float64(n))
			sum, n = 0, 0
		}
	}
	fmt.Fprintf(stdout, "%d frames: mean EPE %.3f px\n", len(set.Pairs), total/float64(max(len(set.Pairs), 1)))
	return nil
}

// measureLatency times c.latency calls of Estimate on live at c.fps
// without the adapter, then as many with the adapter running in the
// background at c.rate and offered every frame, and prints the median
// and 90th percentile of both and their ratio. The frames are rendered
// before the timing starts.
func measureLatency(ctx context.Context, c config, d *synth.Drive, render *synth.Options, live *model.Estimator, ad *adapt.Adapter, stdout io.Writer) error {
	const distinct = 20
	var views [][2]*image.NRGBA
	for f := range min(distinct, d.Frames()) {
		p, err := synth.GenerateFrame(d, d.Frames()-1-f, render) // the last leg's frames
		if err != nil {
			return err
		}
		views = append(views, [2]*image.NRGBA{p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)})
	}
	phase := func(adapting bool) ([]time.Duration, error) {
		pace := newPacer(c.fps)
		var ts []time.Duration
		for i := range c.latency {
			pace.wait()
			v := views[i%len(views)]
			start := time.Now()
			_, err := estimate(ctx, live, v[0], v[1])
			ts = append(ts, time.Since(start))
			if err != nil {
				return nil, err
			}
			if adapting {
				if err := ad.Offer(v[0], v[1]); err != nil {
					return nil, err
				}
			}
		}
		return ts, nil
	}
	for range 3 { // warm-up: buffers and the worker pool
		if _, err := estimate(ctx, live, views[0][0], views[0][1]); err != nil {
			return err
		}
	}
	without, err := phase(false)
	if err != nil {
		return err
	}
	bg, cancel := context.WithCancel(ctx)
	done := make(chan error, 1)
	go func() { done <- ad.Run(bg) }()
	for _, v := range views { // the adapter needs frames before it steps
		if err := ad.Offer(v[0], v[1]); err != nil {
			cancel()
			return err
		}
		time.Sleep(20 * time.Millisecond)
	}
	with, err := phase(true)
	cancel()
	if rerr := <-done; err == nil {
		err = rerr
	}
	if err != nil {
		return err
	}
	s := ad.Status()
	m0, m1 := percentile(without, 0.5), percentile(with, 0.5)
	fmt.Fprintf(stdout, "Estimate at %dx%d, %d calls each at %.3g frames/s (0: unpaced), adapter at %.3g steps/s (%d steps taken)\n", c.width, c.height, c.latency, c.fps, c.rate, s.Steps)
	fmt.Fprintf(stdout, "without adaptation: median %.1f ms, 90th percentile %.1f ms\n", ms(m0), ms(percentile(without, 0.9)))
	fmt.Fprintf(stdout, "while adapting:     median %.1f ms, 90th percentile %.1f ms\n", ms(m1), ms(percentile(with, 0.9)))
	fmt.Fprintf(stdout, "ratio of medians %.2f, of 90th percentiles %.2f (target ≤ 1.5)\n", float64(m1)/float64(m0), float64(percentile(with, 0.9))/float64(percentile(without, 0.9)))
	return nil
}

func ms(d time.Duration) float64 { return d.Seconds() * 1000 }

// percentile returns the q-quantile of ts (nearest rank).
func percentile(ts []time.Duration, q float64) time.Duration {
	s := append([]time.Duration(nil), ts...)
	for i := 1; i < len(s); i++ { // insertion sort: a few hundred values
		for j := i; j > 0 && s[j] < s[j-1]; j-- {
			s[j], s[j-1] = s[j-1], s[j]
		}
	}
	k := int(q*float64(len(s))+0.5) - 1
	return s[min(max(k, 0), len(s)-1)]
}

// truthOf returns the left view's exact disparity in pixels.
func truthOf(p *synth.Pair) (*depth.Disparity, error) {
	h, w := p.DispLeft.H, p.DispLeft.W
	gt, err := depth.NewDisparity(image.Rect(0, 0, w, h))
	if err != nil {
		return nil, err
	}
	for i, v := range p.DispLeft.Pix[:h*w] {
		if v > 0 {
			gt.Pix[i], gt.Mask[i] = v*float32(w), 1
		}
	}
	return gt, nil
}

// epe runs the Estimator of either kind on the pair and returns its
// end-point error in pixels.
func epe(ctx context.Context, e *model.Estimator, left, right image.Image, gt *depth.Disparity) (float64, error) {
	est, err := estimate(ctx, e, left, right)
	if err != nil {
		return 0, err
	}
	m, err := depth.DisparityErrors(est.Disparity, gt)
	if err != nil {
		return 0, fmt.Errorf("adaptdrive: %w", err)
	}
	return m.EPE, nil
}

// estimate runs the Estimator of either kind on the pair.
func estimate(ctx context.Context, e *model.Estimator, left, right image.Image) (*model.Estimate, error) {
	if e.Kind() == "stereo" {
		return e.EstimatePair(ctx, left, right)
	}
	return e.Estimate(ctx, left)
}
