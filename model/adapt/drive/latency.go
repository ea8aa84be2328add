package drive

import (
	"context"
	"fmt"
	"image"
	"slices"
	"time"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/adapt"
	"github.com/parallaxdepth/parallax/synth"
)

// Pacer spaces events as a camera at a fixed rate delivers frames; a slow
// frame is not caught up with a burst.
type Pacer struct {
	interval time.Duration
	next     time.Time
}

// NewPacer returns a Pacer at fps frames a second; 0 never waits.
func NewPacer(fps float64) *Pacer {
	p := &Pacer{next: time.Now()}
	if fps > 0 {
		p.interval = time.Duration(float64(time.Second) / fps)
	}
	return p
}

// Wait sleeps until the next frame is due.
func (p *Pacer) Wait() {
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

// Latency times calls Estimate calls (EstimatePair for stereo weights) of
// e at fps on the last 20 frames of the drive, first without adaptation,
// then as many with ad running in the background and offered every frame,
// and returns both sets of durations. The frames are rendered before the
// timing starts. Time it on an idle machine.
func Latency(ctx context.Context, d *synth.Drive, render *synth.Options, e *model.Estimator, ad *adapt.Adapter, calls int, fps float64) (without, with []time.Duration, err error) {
	if err := d.Check(); err != nil {
		return nil, nil, fmt.Errorf("drive: %w", err)
	}
	if e == nil || ad == nil || calls < 1 || !(fps >= 0) {
		return nil, nil, fmt.Errorf("drive: Latency needs an Estimator, an Adapter, at least 1 call and frames/s ≥ 0 (calls %d, fps %v)", calls, fps)
	}
	var views [][2]image.Image
	for f := range min(20, d.Frames()) {
		p, err := synth.GenerateFrame(d, d.Frames()-1-f, render)
		if err != nil {
			return nil, nil, err
		}
		views = append(views, [2]image.Image{p.Left.ToNRGBA(0), p.Right.ToNRGBA(0)})
	}
	phase := func(adapting bool) ([]time.Duration, error) {
		pace := NewPacer(fps)
		var ts []time.Duration
		for i := range calls {
			pace.Wait()
			v := views[i%len(views)]
			start := time.Now()
			_, err := Estimate(ctx, e, v[0], v[1])
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
		if _, err := Estimate(ctx, e, views[0][0], views[0][1]); err != nil {
			return nil, nil, err
		}
	}
	if without, err = phase(false); err != nil {
		return nil, nil, err
	}
	bg, cancel := context.WithCancel(ctx)
	done := make(chan error, 1)
	go func() { done <- ad.Run(bg) }()
	for _, v := range views { // the adapter needs frames before it steps
		if err = ad.Offer(v[0], v[1]); err != nil {
			break
		}
		time.Sleep(20 * time.Millisecond)
	}
	if err == nil {
		with, err = phase(true)
	}
	cancel()
	if rerr := <-done; err == nil {
		err = rerr
	}
	return without, with, err
}

// Percentile returns the q-quantile of ts by nearest rank (q in [0, 1]);
// 0 for no durations.
func Percentile(ts []time.Duration, q float64) time.Duration {
	if len(ts) == 0 {
		return 0
	}
	s := slices.Clone(ts)
	slices.Sort(s)
	k := int(q*float64(len(s))+0.5) - 1
	return s[min(max(k, 0), len(s)-1)]
}
