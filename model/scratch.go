package model

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/model/internal/cpu"
)

// The scratch memory of an Estimator's workers, counted from the
// architecture before anything is allocated (EstimatorOptions.
// MaxScratchBytes). The figures follow the liveness plan (liveness.go) and
// the engine's plans (cpu.ForwardOnlySize); TestScratchBytes compares them
// with the heap a worker takes.

// netBytes returns about the bytes a NewNet of a for one image (or pair)
// holds: the activations of the liveness plan, the convolutions' shared
// forward workspaces and per-goroutine buffers and, for a stereo network,
// its input pair, its two-channel outputs and the classical matcher's
// buffers.
func netBytes(a *Arch) int64 {
	nb := 1
	if a.IsStereo() {
		nb = 2
	}
	index := map[string]int{InputName: 0}
	sizes := []int{0}
	steps := make([]step, 0, len(a.Layers))
	var xpad, wpack int
	var own int64
	for i := range a.Layers {
		l := &a.Layers[i]
		s := step{out: len(sizes)}
		for _, name := range l.Inputs {
			s.in = append(s.in, index[name])
		}
		index[l.Name] = len(sizes)
		sizes = append(sizes, nb*l.Out.Len())
		steps = append(steps, s)
		if l.Op == OpConv {
			in0, _ := a.Shape(l.Inputs[0])
			x, w, o := cpu.ForwardOnlySize(convParams(l, in0), nb, in0.H, in0.W)
			xpad, wpack, own = max(xpad, x), max(wpack, w), own+o
		}
	}
	keep := map[int]bool{}
	for _, name := range a.Outputs {
		keep[index[name]] = true
	}
	_, slotLen := planSlots(steps, sizes, keep)
	n := 4*int64(xpad+wpack) + own
	for _, l := range slotLen {
		n += 4 * int64(l)
	}
	if !a.IsStereo() {
		return n
	}
	n += 4 * int64(nb*a.Input.Len()) // the pair [left; right]
	for _, name := range a.Outputs {
		sh, _ := a.Shape(name)
		n += 4 * 2 * int64(sh.H*sh.W)
	}
	// Matching at 1/2^MatchLevel: its disparity and validity for both
	// views (2 × 8 bytes a pixel) and each match that runs at once
	// (matchBytes, matchSlots).
	w, h := a.Input.W>>a.Config.MatchLevel(), a.Input.H>>a.Config.MatchLevel()
	maxDisp := max(min(int(math.Ceil(a.Config.DMax*float64(w))), w-1), 1)
	return n + int64(w*h)*16 + int64(matchSlots(1, h, w, maxDisp))*matchBytes(h, w, maxDisp)
}

// stageBytes returns about the bytes one stage of a worker (estimator.go)
// holds at a's input size: its Net and the call's own buffers (the scaled
// RGBA64 image, two three-channel planes and six one-channel maps).
func stageBytes(a *Arch) int64 {
	px := int64(a.Input.W * a.Input.H)
	return netBytes(a) + px*(8+2*12+6*4)
}

// largestStage returns the network size among those the Estimator can run
// at (and the weights' own size c) whose stage takes the most memory, and
// that memory. The memory grows with each side, so only the tallest size
// of each width is tried.
func (e *Estimator) largestStage(c Config) (w, h int, bytes int64, err error) {
	try := func(tw, th int) error {
		cc := c
		cc.Width, cc.Height = tw, th
		a, err := Build(cc)
		if err != nil {
			return err
		}
		if b := stageBytes(a); b > bytes {
			w, h, bytes = tw, th, b
		}
		return nil
	}
	// NewEstimator builds the first worker at the weights' own size.
	if err := try(c.Width, c.Height); err != nil || e.fixed {
		return w, h, bytes, err
	}
	top := max(e.maxSide/SizeStep*SizeStep, MinSide)
	for tw := MinSide; tw <= top; tw += SizeStep {
		th := min(top, MaxNetPixels/tw/SizeStep*SizeStep)
		if th < MinSide {
			break
		}
		if err := try(tw, th); err != nil {
			return 0, 0, 0, err
		}
	}
	return w, h, bytes, nil
}

// mib formats a byte count in MiB for errors and docs.
func mib(n int64) string { return fmt.Sprintf("%.1f MiB", float64(n)/(1<<20)) }
