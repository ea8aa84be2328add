package drive

import (
	"context"
	"math"
	"testing"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/synth"
)

// TestPlay plays a 3 + 4 frame drive through the default weights without
// an adapter: one block per leg (blocks end with their leg), each block's
// EPE the mean of its frames' in the record, and the first frame's EPE
// equal to the mean |estimate − truth| over the pixels with positive
// truth, computed here from the estimate and the synthetic pair directly.
func TestPlay(t *testing.T) {
	d := &synth.Drive{Legs: []synth.Leg{{Style: synth.Greenhouse, Frames: 3}, {Style: synth.Storage, Frames: 4}}, Seed: 2}
	render := &synth.Options{Width: 128, Height: 96, Samples: 1}
	est, err := model.NewEstimator(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	var blocks []Block
	rec, err := Play(context.Background(), d, []*model.Estimator{est}, nil, &Options{Render: render}, func(b Block) error {
		blocks = append(blocks, b)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(rec.Frame) != 7 || len(rec.EPE) != 1 || len(rec.EPE[0]) != 7 {
		t.Fatalf("record of %d frames, %d series", len(rec.Frame), len(rec.EPE))
	}
	want := []struct {
		first, last int
		style       synth.Style
	}{{0, 2, synth.Greenhouse}, {3, 6, synth.Storage}}
	if len(blocks) != len(want) {
		t.Fatalf("%d blocks, want %d: %+v", len(blocks), len(want), blocks)
	}
	for i, b := range blocks {
		if b.First != want[i].first || b.Last != want[i].last || b.Style != want[i].style {
			t.Errorf("block %d: frames %d-%d %v, want %d-%d %v", i, b.First, b.Last, b.Style, want[i].first, want[i].last, want[i].style)
		}
		var sum float64
		for _, v := range rec.EPE[0][b.First : b.Last+1] {
			sum += v
		}
		if m := sum / float64(b.Last+1-b.First); m != b.EPE[0] {
			t.Errorf("block %d: EPE %v, the mean of its frames %v", i, b.EPE[0], m)
		}
	}
	p, err := synth.GenerateFrame(d, 0, render)
	if err != nil {
		t.Fatal(err)
	}
	e, err := est.Estimate(context.Background(), p.Left.ToNRGBA(0))
	if err != nil {
		t.Fatal(err)
	}
	var sum float64
	n := 0
	for i, v := range p.DispLeft.Pix[:128*96] {
		if v > 0 && e.Disparity.Mask[i] != 0 {
			sum += math.Abs(float64(e.Disparity.Pix[i]) - float64(v*128))
			n++
		}
	}
	if n == 0 {
		t.Fatal("no pixel with truth and an estimate")
	}
	if got, want := rec.EPE[0][0], sum/float64(n); math.Abs(got-want) > 1e-6*want {
		t.Errorf("frame 0: EPE %v, computed from the estimate and the truth %v", got, want)
	}
}

// TestPlayRefuses: bad arguments are errors naming them.
func TestPlayRefuses(t *testing.T) {
	est, err := model.NewEstimator(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	d := &synth.Drive{Legs: []synth.Leg{{Style: synth.Greenhouse, Frames: 1}}}
	for _, c := range []struct {
		d    *synth.Drive
		ests []*model.Estimator
		o    *Options
	}{{nil, []*model.Estimator{est}, nil}, {&synth.Drive{}, []*model.Estimator{est}, nil},
		{&synth.Drive{Legs: []synth.Leg{{Style: synth.Greenhouse, Frames: 0}}}, []*model.Estimator{est}, nil}, {d, nil, nil}, {d, []*model.Estimator{nil}, nil}, {d, []*model.Estimator{est}, &Options{Block: -1}}, {d, []*model.Estimator{est}, &Options{StepsPerFrame: math.NaN()}}} {
		if _, err := Play(context.Background(), c.d, c.ests, nil, c.o, nil); err == nil {
			t.Errorf("Play(%v, %d Estimators, %+v) accepted", c.d, len(c.ests), c.o)
		}
	}
	// Latency refuses the same empty drives, and a missing adapter, before
	// rendering anything.
	for _, dd := range []*synth.Drive{nil, {}, {Legs: []synth.Leg{{Style: synth.Greenhouse, Frames: 0}}}, d} {
		if _, _, err := Latency(context.Background(), dd, nil, est, nil, 1, 0); err == nil {
			t.Errorf("Latency(%v, no adapter) accepted", dd)
		}
	}
}

// TestNewEstimatorKeepsEveryPixel: a one-image Estimator from NewEstimator keeps
// every pixel of a drive frame, so that EPE scores all the pixels with
// truth; the default validity rules drop some of the same frame.
func TestNewEstimatorKeepsEveryPixel(t *testing.T) {
	d := &synth.Drive{Legs: []synth.Leg{{Style: synth.Storage, Frames: 1}}, Seed: 2}
	p, err := synth.GenerateFrame(d, 0, &synth.Options{Width: 128, Height: 96, Samples: 1})
	if err != nil {
		t.Fatal(err)
	}
	kept := func(e *model.Estimator) int {
		t.Helper()
		est, err := e.Estimate(context.Background(), p.Left.ToNRGBA(0))
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, m := range est.Disparity.Mask {
			if m != 0 {
				n++
			}
		}
		return n
	}
	e, err := NewEstimator(nil)
	if err != nil {
		t.Fatal(err)
	}
	if n := kept(e); n != 128*96 {
		t.Errorf("NewEstimator kept %d of %d pixels", n, 128*96)
	}
	def, err := model.NewEstimator(nil, nil)
	if err != nil {
		t.Fatal(err)
	}
	if n := kept(def); n == 128*96 {
		t.Error("the default validity rules kept every pixel: the frame does not tell the options apart")
	}
}
