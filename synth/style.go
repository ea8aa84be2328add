package synth

import (
	"fmt"
	"math"
	"strings"

	"github.com/parallaxdepth/parallax/depth"
)

// Style selects the kind of scene and the rig that records it.
type Style int

const (
	// Greenhouse is a greenhouse aisle seen from a small rover's stereo
	// camera: soil or boarded floor, planters and crates, posts, hanging
	// trays and a glazed back wall. Rig: 72° horizontal field of view,
	// 0.12 m baseline, about 0.45 m above the floor.
	Greenhouse Style = iota
	// Storage is a storage room with shelving units, cardboard boxes with
	// printed labels, plastic bins and pallets. Rig: 60° horizontal field
	// of view, 0.1 m baseline, about 1.25 m above the floor.
	Storage
	// Orchard is an orchard alley seen from a small ground robot: grass
	// and bare soil, rows of fruit trees on trellis posts and wires, bins
	// and stones, a tree line and sky up to about 30 m away, and now and
	// then a leaf cluster or a stake within a metre of the camera. Its
	// pairs are varied by default (see Variation); unvaried rig: 80°
	// horizontal field of view, 0.1 m baseline.
	Orchard
	// Workshop is an industrial hall: concrete floor with painted lanes,
	// steel columns, machines, drums, racks and pallets, overhead ducts,
	// seen from the aisle or from right above a workbench with parts on
	// it (down to 0.3 m). Its pairs are varied by default (see
	// Variation); unvaried rig: 70° horizontal field of view, 0.08 m
	// baseline.
	Workshop
)

// Styles lists every style, in the order of their values.
var Styles = []Style{Greenhouse, Storage, Orchard, Workshop}

// String returns the style's name as ParseStyle reads it.
func (s Style) String() string {
	switch s {
	case Greenhouse:
		return "greenhouse"
	case Storage:
		return "storage"
	case Orchard:
		return "orchard"
	case Workshop:
		return "workshop"
	}
	return fmt.Sprintf("Style(%d)", int(s))
}

// ParseStyle returns the style named name (one of Styles' names, case
// insensitive).
func ParseStyle(name string) (Style, error) {
	for _, s := range Styles {
		if strings.EqualFold(name, s.String()) {
			return s, nil
		}
	}
	names := make([]string, len(Styles))
	for i, s := range Styles {
		names[i] = s.String()
	}
	return 0, fmt.Errorf("synth: unknown style %q (want one of %s)", name, strings.Join(names, ", "))
}

// rigSpec is what fixes a style's rig independently of the image size.
type rigSpec struct {
	hfov               float64 // horizontal field of view, radians
	baseline           float64 // metres
	minDepth, maxDepth float64 // metres
}

func (s Style) spec() (rigSpec, bool) {
	switch s {
	case Greenhouse:
		return rigSpec{hfov: 72 * math.Pi / 180, baseline: 0.12, minDepth: 0.25, maxDepth: 20}, true
	case Storage:
		return rigSpec{hfov: 60 * math.Pi / 180, baseline: 0.1, minDepth: 0.3, maxDepth: 12}, true
	case Orchard:
		return rigSpec{hfov: 80 * math.Pi / 180, baseline: 0.1, minDepth: 0.3, maxDepth: 32}, true
	case Workshop:
		return rigSpec{hfov: 70 * math.Pi / 180, baseline: 0.08, minDepth: 0.3, maxDepth: 32}, true
	}
	return rigSpec{}, false
}

// Rig returns the style's rig at the image size width × height: focal
// length (W/2)/tan(hfov/2) pixels, square pixels (Fy = Fx), the principal
// point at the image centre ((W−1)/2, (H−1)/2) and DeltaCx 0. It is the
// rig of every unvaried pair (VaryNone); a varied pair has a rig of its
// own (Pair.Rig). It returns an error for an unknown style or a size that
// depth.Rig rejects.
func (s Style) Rig(width, height int) (*depth.Rig, error) {
	sp, ok := s.spec()
	if !ok {
		return nil, fmt.Errorf("synth: unknown style %d", int(s))
	}
	return sp.rig(s, width, height)
}

func (sp rigSpec) rig(s Style, width, height int) (*depth.Rig, error) {
	f := float64(width) / 2 / math.Tan(sp.hfov/2)
	r := &depth.Rig{
		Width: width, Height: height,
		Baseline: sp.baseline, DeltaCx: 0,
		Fx: f, Fy: f, Cx: float64(width-1) / 2, Cy: float64(height-1) / 2,
		MinDepth: sp.minDepth, MaxDepth: sp.maxDepth,
	}
	if err := r.Validate(); err != nil {
		return nil, fmt.Errorf("synth: %s rig at %dx%d: %w", s, width, height, err)
	}
	return r, nil
}
