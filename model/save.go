package model

import (
	"errors"
	"fmt"
	"image"
	"path/filepath"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/depth"
)

// SaveOptions choose the optional files of Estimate.Save. A nil
// *SaveOptions writes only the PNG files.
type SaveOptions struct {
	// PFM also writes BASE.disparity.pfm (pixels), BASE.depth.pfm (metres)
	// and BASE.confidence.pfm.
	PFM bool
	// PLY also writes BASE.points.ply, a point cloud in metres coloured
	// from left (binary little-endian).
	PLY bool
}

// Save writes e's files, each atomically, with names that start with base:
// BASE.depth-mm.png (16-bit depth in millimetres, 0 = no estimate, see
// depth.SavePNG16) and, when any pixel is valid, BASE.depth-colour.png
// (coloured linearly in disparity, i.e. inverse depth, so that near detail
// shows and a few far outliers cannot wash the picture out), plus the
// files of opt. It returns the file names written (without the folder) and
// the number of valid pixels outside the 16-bit PNG's range. It is an
// error if e has no depth (an Estimator without a rig).
func (e *Estimate) Save(base string, left image.Image, opt *SaveOptions) (files []string, dropped int, err error) {
	var o SaveOptions
	if opt != nil {
		o = *opt
	}
	name := func(suffix string) string {
		files = append(files, filepath.Base(base)+suffix)
		return base + suffix
	}
	if e.Depth == nil {
		return nil, 0, errors.New("model: the estimate has no depth (an Estimator without a rig)")
	}
	if dropped, err = depth.SavePNG16(name(".depth-mm.png"), e.Depth); err != nil {
		return nil, 0, err
	}
	if e.Depth.Valid() > 0 {
		colour, err := depth.ColorDisparity(e.Disparity, nil)
		if err != nil {
			return nil, 0, err
		}
		if err := depth.SavePNG(name(".depth-colour.png"), colour); err != nil {
			return nil, 0, err
		}
	}
	if o.PFM {
		for _, m := range []struct {
			suffix string
			m      *depth.Map
		}{{".disparity.pfm", &e.Disparity.Map}, {".depth.pfm", &e.Depth.Map}, {".confidence.pfm", &e.Confidence.Map}} {
			if err := depth.SavePFM(name(m.suffix), m.m.Pix, m.m.Rect.Dx(), m.m.Rect.Dy(), 1); err != nil {
				return nil, 0, err
			}
		}
	}
	if o.PLY {
		pc, err := depth.PointCloudFromDepth(e.Depth, left, e.Rig)
		if err != nil {
			return nil, 0, err
		}
		if err := depth.SavePLY(name(".points.ply"), pc, depth.PLYBinary); err != nil {
			return nil, 0, err
		}
	}
	return files, dropped, nil
}

// EstimateInfo is what Estimate.Describe says beside the maps themselves.
type EstimateInfo struct {
	// Source names the input image.
	Source string
	// Weights names the weights (see DescribeWeights) and Config is theirs.
	Weights string
	Config  Config
	// Elapsed is the time of the Estimate call; First, if not 0, that of
	// the first call, which also sets up buffers.
	Elapsed, First time.Duration
	// Flip tells that flip post-processing was on.
	Flip bool
	// Files lists the files written and Dropped the pixels the 16-bit PNG
	// could not hold (see Save).
	Files   []string
	Dropped int
}

// Describe returns a text summary of e, one "key  value" line each: source,
// size, time, weights, depth range and median over the valid pixels, the
// pixels of confidence below 0.5, and the files.
func (e *Estimate) Describe(info EstimateInfo) string {
	var s strings.Builder
	ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
	b := e.Disparity.Rect
	fmt.Fprintf(&s, "image        %s\nsize         %d x %d px (network input %d x %d)\n", info.Source, b.Dx(), b.Dy(), info.Config.Width, info.Config.Height)
	flip := ""
	if info.Flip {
		flip = ", with flip post-processing"
	}
	fmt.Fprintf(&s, "time         %.1f ms per image (the Estimate call%s", ms(info.Elapsed), flip)
	if info.First > 0 {
		fmt.Fprintf(&s, "; the first call took %.1f ms", ms(info.First))
	}
	fmt.Fprintf(&s, ")\nweights      %s\n", info.Weights)
	if e.Depth != nil {
		if zs := e.Depth.Stats(); zs.Valid == 0 {
			fmt.Fprintf(&s, "depth        no valid pixel\n")
		} else {
			fmt.Fprintf(&s, "depth range  %.3f … %.3f m over %d of %d pixels\nmedian depth %.3f m\n", zs.Min, zs.Max, zs.Valid, zs.Pixels, zs.Median)
		}
	}
	if info.Dropped > 0 {
		fmt.Fprintf(&s, "note         %d pixels outside 1 mm … 65.535 m are 0 in the 16-bit PNG\n", info.Dropped)
	}
	fmt.Fprintf(&s, "confidence   %d of %d pixels below 0.5 (left-right disagreement)\n", e.Confidence.CountBelow(0.5), e.Confidence.Valid())
	if len(info.Files) > 0 {
		fmt.Fprintf(&s, "files        %s\n", strings.Join(info.Files, ", "))
	}
	return s.String()
}

// MaskConfidence marks the pixels of e's disparity and depth whose
// confidence is below min invalid (min ≤ 0: none).
func (e *Estimate) MaskConfidence(min float32) {
	if min <= 0 {
		return
	}
	e.Confidence.Threshold(&e.Disparity.Map, min)
	if e.Depth != nil {
		e.Confidence.Threshold(&e.Depth.Map, min)
	}
}
