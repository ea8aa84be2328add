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
	// and BASE.confidence.pfm, NaN where there is no estimate.
	PFM bool
	// PLY also writes BASE.points.ply, a point cloud in metres coloured
	// from left (binary little-endian).
	PLY bool
	// OrganizedPLY writes the point cloud with one point per pixel, NaN
	// where there is no depth (see depth.OrganizedPointCloud), instead of
	// the valid pixels only. Default false.
	OrganizedPLY bool
}

// FileUnits returns what the file Save wrote under name holds and in which
// unit, by its suffix, for summaries; "" for a name Save does not write.
func FileUnits(name string) string {
	for _, f := range []struct{ suffix, what string }{
		{".depth-mm.png", "depth, 16-bit grey, 1 level = 1 mm, 0 = no depth (text chunks: unit, scale, rig)"},
		{".depth-colour.png", "colour picture, linear in inverse depth (near bright), scale bar in metres"},
		{".disparity.pfm", "disparity in pixels at the image's width, float32, NaN = no estimate"},
		{".depth.pfm", "depth in metres, float32, NaN = no depth"},
		{".confidence.pfm", "left-right confidence in [0, 1], float32"},
		{".points.ply", "point cloud, metres, camera frame x right y down z forward"},
		{".summary.txt", "this summary"},
	} {
		if strings.HasSuffix(name, f.suffix) {
			return f.what
		}
	}
	return ""
}

// Save writes e's files, each atomically, with names that start with base:
// BASE.depth-mm.png (16-bit depth in millimetres, 0 = no estimate, its
// unit and the rig in text chunks, see depth.SavePNG16Rig) and, when any pixel is valid, BASE.depth-colour.png
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
	if dropped, err = depth.SavePNG16Rig(name(".depth-mm.png"), e.Depth, e.Rig); err != nil {
		return nil, 0, err
	}
	if e.Depth.Valid() > 0 {
		colour, err := depth.ColorDepth(e.Depth, nil)
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
			if err := depth.SaveMapPFM(name(m.suffix), m.m); err != nil {
				return nil, 0, err
			}
		}
	}
	if o.PLY {
		build := depth.PointCloudFromDepth
		if o.OrganizedPLY {
			build = depth.OrganizedPointCloud
		}
		pc, err := build(e.Depth, left, e.Rig)
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
	// Weights names the weights (see DescribeWeights); without weights
	// (Weights "", such as a classical matcher) Method names what made the
	// estimate instead.
	Weights, Method string
	// Elapsed is the time of the Estimate call; First, if not 0, that of
	// the first call, which also sets up buffers.
	Elapsed, First time.Duration
	// Flip tells that flip post-processing was on.
	Flip bool
	// Files lists the files written and Dropped the pixels the 16-bit PNG
	// could not hold (see Save).
	Files   []string
	Dropped int
	// Notes are lines the reader must see, each printed as a "note" line
	// before the depth: an assumed rig, holes filled, a skipped check.
	Notes []string
}

// Describe returns a text summary of e, one "key  value" line each: source,
// size, time, weights or method, notes, depth range and median over the valid pixels, the
// pixels of confidence below 0.5, and the files.
func (e *Estimate) Describe(info EstimateInfo) string {
	var s strings.Builder
	ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
	b := e.Disparity.Rect
	fmt.Fprintf(&s, "image        %s\nsize         %d x %d px", info.Source, b.Dx(), b.Dy())
	if n := e.NetworkSize; n != (image.Point{}) {
		fmt.Fprintf(&s, " (network input %d x %d)", n.X, n.Y)
	}
	flip := ""
	if info.Flip {
		flip = ", with flip post-processing"
	}
	fmt.Fprintf(&s, "\ntime         %.1f ms per image (one call%s", ms(info.Elapsed), flip)
	if info.First > 0 {
		fmt.Fprintf(&s, "; the first call took %.1f ms", ms(info.First))
	}
	fmt.Fprintf(&s, ")\n")
	if info.Weights != "" {
		fmt.Fprintf(&s, "weights      %s\n", info.Weights)
	}
	if info.Method != "" {
		fmt.Fprintf(&s, "method       %s\n", info.Method)
	}
	for _, n := range info.Notes {
		fmt.Fprintf(&s, "note         %s\n", n)
	}
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
	for i, f := range info.Files {
		key := ""
		if i == 0 {
			key = "files"
		}
		if u := FileUnits(f); u != "" {
			f += "  (" + u + ")"
		}
		fmt.Fprintf(&s, "%-12s %s\n", key, f)
	}
	return s.String()
}

// Caution is the warning every summary of estimated depth ends with
// (SaveWithSummary).
const Caution = `Caution: estimated depth is not a safety-rated sensor. Its errors grow with distance and it fails
silently on glass, mirrors, textureless or repetitive surfaces, darkness and glare; a machine that
acts on it needs independent obstacle sensing.`

// SaveWithSummary writes e's files like Save and then BASE.summary.txt:
// Describe(info), with the files written (the summary's own included) and
// the dropped pixels filled in, followed by Caution. It returns the
// summary's text.
func (e *Estimate) SaveWithSummary(base string, left image.Image, opt *SaveOptions, info EstimateInfo) (string, error) {
	files, dropped, err := e.Save(base, left, opt)
	if err != nil {
		return "", err
	}
	info.Files, info.Dropped = append(files, filepath.Base(base)+".summary.txt"), dropped
	sum := e.Describe(info) + Caution + "\n"
	return sum, depth.SaveFile(base+".summary.txt", []byte(sum))
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
