package train

import (
	"context"
	"errors"
	"fmt"
	"io"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/data"
	"github.com/parallaxdepth/parallax/planar"
)

// Evaluation holds the errors of a network's left disparity d_L against
// the ground truth of a data set, at the network's input resolution. Each
// measure is the mean of the per-pair values (common practice in depth
// benchmarks, which average per image).
type Evaluation struct {
	// Pairs is the number of pairs scored.
	Pairs int
	// Disparity holds EPE and bad-N in pixels at the network's width, if
	// HasDisparity (the data set has truth/disp_left). N is the total
	// number of pixels counted.
	Disparity    depth.DisparityMetrics
	HasDisparity bool
	// Depth holds abs rel, sq rel, RMSE, RMSE log and the δ thresholds in
	// metres, if HasDepth (the data set has truth/depth_left and a rig).
	// The estimate is the rig's metric depth of d_L, without median
	// scaling (a calibrated rig gives metric depth), clamped to and counted
	// within the rig's depth range when the rig gives one. N is the total
	// number of pixels counted; Scale is 1.
	Depth    depth.DepthMetrics
	HasDepth bool
}

// Evaluate runs the weights w on every pair of ds (resized to the
// network's input) with model's graph-free forward pass and scores d_L
// against the ground truth with package depth. It returns an error if ds
// has no disparity or depth ground truth, or a file cannot be read.
func Evaluate(ctx context.Context, w *model.Weights, ds *dataset.Set, batch int) (*Evaluation, error) {
	if w == nil || ds == nil {
		return nil, errors.New("train: evaluate: nil weights or data set")
	}
	if batch < 1 {
		batch = 1
	}
	hasDisp, hasDepth := false, false
	for _, k := range ds.Truth {
		hasDisp = hasDisp || k == dataset.DispLeft
		hasDepth = hasDepth || (k == dataset.DepthLeft && ds.Rig != nil)
	}
	if !hasDisp && !hasDepth {
		return nil, fmt.Errorf("train: evaluate: %s has no left disparity or depth ground truth (with a rig)", ds.Dir)
	}
	c := w.Config.WithDefaults()
	l, err := data.NewLoader(ds, &data.Options{Width: c.Width, Height: c.Height, BatchSize: batch})
	if err != nil {
		return nil, fmt.Errorf("train: evaluate: %w", err)
	}
	nets := map[int]*model.Net{}
	ev := &Evaluation{HasDisparity: hasDisp, HasDepth: hasDepth}
	var sd depth.DisparityMetrics
	var sz depth.DepthMetrics
	var nd, nz int
	var zopt depth.DepthOptions
	if hasDepth {
		zopt.MinDepth, zopt.MaxDepth = ds.Rig.MinDepth, ds.Rig.MaxDepth
	}
	it := l.Epoch(ctx, 0)
	defer it.Close()
	for {
		b, err := it.Next()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("train: evaluate: %w", err)
		}
		n := b.Left.N
		net := nets[n]
		if net == nil {
			if net, err = model.NewNet(w, n); err != nil {
				return nil, fmt.Errorf("train: evaluate: %w", err)
			}
			nets[n] = net
		}
		out, err := net.Forward(b.Left)
		if err != nil {
			return nil, fmt.Errorf("train: evaluate: %w", err)
		}
		d0 := out[0]
		plane := d0.H * d0.W
		for i := range n {
			est := planar.New(1, 1, d0.H, d0.W)
			copy(est.Pix, d0.Pix[2*i*plane:(2*i+1)*plane]) // channel 0: d_L
			ev.Pairs++
			if hasDisp {
				e, err := depth.DisparityFromFraction(est, 0)
				if err != nil {
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				g, err := depth.DisparityFromFraction(b.DispLeft, i)
				if err != nil {
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				m, err := depth.DisparityErrors(e, g)
				if err != nil {
					if errors.Is(err, depth.ErrNoValidPixels) {
						continue
					}
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				nd++
				sd.N += m.N
				sd.EPE += m.EPE
				sd.Bad1 += m.Bad1
				sd.Bad2 += m.Bad2
				sd.Bad3 += m.Bad3
			}
			if hasDepth {
				e, err := ds.Rig.DepthMapFromFraction(est, 0)
				if err != nil {
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				g, err := depth.NewDepth(e.Rect)
				if err != nil {
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				gt := b.DepthLeft.Pix[i*plane : (i+1)*plane]
				for y := range d0.H {
					for x := range d0.W {
						if v := gt[y*d0.W+x]; v > 0 {
							g.Set(x, y, v)
						}
					}
				}
				m, err := depth.DepthErrors(e, g, &zopt)
				if err != nil {
					if errors.Is(err, depth.ErrNoValidPixels) {
						continue
					}
					return nil, fmt.Errorf("train: evaluate %s: %w", b.Names[i], err)
				}
				nz++
				sz.N += m.N
				sz.AbsRel += m.AbsRel
				sz.SqRel += m.SqRel
				sz.RMSE += m.RMSE
				sz.RMSELog += m.RMSELog
				sz.Delta1 += m.Delta1
				sz.Delta2 += m.Delta2
				sz.Delta3 += m.Delta3
			}
		}
	}
	if nd > 0 {
		k := float64(nd)
		ev.Disparity = depth.DisparityMetrics{N: sd.N, EPE: sd.EPE / k, Bad1: sd.Bad1 / k, Bad2: sd.Bad2 / k, Bad3: sd.Bad3 / k}
	} else {
		ev.HasDisparity = false
	}
	if nz > 0 {
		k := float64(nz)
		ev.Depth = depth.DepthMetrics{N: sz.N, Scale: 1, AbsRel: sz.AbsRel / k, SqRel: sz.SqRel / k, RMSE: sz.RMSE / k,
			RMSELog: sz.RMSELog / k, Delta1: sz.Delta1 / k, Delta2: sz.Delta2 / k, Delta3: sz.Delta3 / k}
	} else {
		ev.HasDepth = false
	}
	return ev, nil
}
