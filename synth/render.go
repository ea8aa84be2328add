package synth

import (
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// Pair is a rendered stereo pair with its ground truth. Images are
// 1×3×H×W, maps 1×1×H×W (see the package documentation for units).
type Pair struct {
	Rig *depth.Rig

	Left, Right *planar.Image // colour, R, G, B in [0, 1]

	// DispLeft and DispRight are the disparities of the left and right
	// views as a fraction of the width (the module's convention); multiply
	// by Rig.Width for pixels.
	DispLeft, DispRight *planar.Image

	// DepthLeft is the depth (camera z) of the left view, metres.
	DepthLeft *planar.Image

	// VisibleLeft is 1 where the left pixel's surface point is seen by the
	// right camera (inside its image and not hidden), 0 elsewhere;
	// VisibleRight likewise for the right view seen from the left.
	VisibleLeft, VisibleRight *planar.Image

	// Capture is the pair's randomisation, nil for an unvaried pair
	// (VaryNone). Its Rig is then the pair's own.
	Capture *Capture
}

// render draws both views of sc and their ground truth.
//
// Ground truth (depth, disparity, visibility) comes from one ray through
// each pixel centre. Colour is anti-aliased: where the centre rays of a
// pixel and of its four edge neighbours all hit the same face, the pixel takes
// the (pre-filtered) colour of its centre point; elsewhere, near silhouettes
// and creases, it averages samples×samples rays on a regular sub-pixel grid.
// So at a depth edge a pixel's colour mixes both surfaces while its
// disparity is that of the surface under its centre.
func render(sc *scene, rig *depth.Rig, samples int) *Pair {
	return renderShifted(sc, rig, samples, 0)
}

// renderShifted is render with the right camera's principal point
// rowShift pixels below the rig's (see Capture.RowShift): the ground truth
// of each view stays exact at its own pixel centres, and visibility is
// cast from the point's true position in the other view.
func renderShifted(sc *scene, rig *depth.Rig, samples int, rowShift float64) *Pair {
	w, h := rig.Width, rig.Height
	rightOrigin := sc.origin.add(sc.right.scale(rig.Baseline))
	mid := sc.origin.add(sc.right.scale(rig.Baseline / 2))
	views := [2]*view{newView(sc, rig, sc.origin, rig.Cy), newView(sc, rig, rightOrigin, rig.Cy+rowShift)}
	p := &Pair{
		Rig:          rig,
		Left:         planar.New(1, 3, h, w),
		Right:        planar.New(1, 3, h, w),
		DispLeft:     planar.New(1, 1, h, w),
		DispRight:    planar.New(1, 1, h, w),
		DepthLeft:    planar.New(1, 1, h, w),
		VisibleLeft:  planar.New(1, 1, h, w),
		VisibleRight: planar.New(1, 1, h, w),
	}
	fb := rig.Fx * rig.Baseline
	plane := w * h
	inv := 1 / float64(samples*samples)
	centres := make([]hit, plane)
	for vi, v := range views {
		img, disp, vis := p.Left, p.DispLeft, p.VisibleLeft
		other := views[1]
		sign := -1.0 // a left pixel x is seen at x − d in the right view
		dy := rowShift
		if vi == 1 {
			img, disp, vis = p.Right, p.DispRight, p.VisibleRight
			other = views[0]
			sign = 1
			dy = -rowShift
		}
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				centres[y*w+x] = v.trace(float64(x), float64(y))
			}
		}
		for y := 0; y < h; y++ {
			for x := 0; x < w; x++ {
				i := y*w + x
				centre := &centres[i]
				var c rgb
				if uniformAround(centres, x, y, w, h) {
					c = v.shade(centre, float64(x), float64(y), mid)
				} else {
					for sy := 0; sy < samples; sy++ {
						oy := (float64(sy)+0.5)/float64(samples) - 0.5
						for sx := 0; sx < samples; sx++ {
							ox := (float64(sx)+0.5)/float64(samples) - 0.5
							px, py := float64(x)+ox, float64(y)+oy
							hh := v.trace(px, py)
							s := v.shade(&hh, px, py, mid)
							c[0] += s[0]
							c[1] += s[1]
							c[2] += s[2]
						}
					}
					c = c.mul(inv)
				}
				for k := 0; k < 3; k++ {
					img.Pix[k*plane+i] = float32(clamp01(c[k]))
				}
				if centre.shape < 0 {
					continue // nothing hit: disparity and depth 0, not visible
				}
				dpx := fb / centre.t
				disp.Pix[i] = float32(dpx / float64(w))
				if vi == 0 {
					p.DepthLeft.Pix[i] = float32(centre.t)
				}
				xo := float64(x) + sign*dpx
				if xo < 0 || xo > float64(w-1) {
					continue // outside the other image
				}
				// The surface point projects to (xo, y) in the other view;
				// it is visible there if the other camera's ray through that
				// point reaches it before anything else.
				oh := other.trace(xo, float64(y)+dy)
				if oh.shape >= 0 && oh.t >= centre.t*(1-visTol) {
					vis.Pix[i] = 1
				}
			}
		}
	}
	return p
}

// uniformAround reports whether the centre hits of pixel (x, y) and of its
// four edge neighbours inside the image all lie on one face of one shape.
// An edge that crosses the pixel's sub-sample grid (within ±½ pixel of its
// centre) also separates it from a neighbour's centre, except for features
// smaller than a pixel that slip between centres, which then are point
// sampled.
func uniformAround(hits []hit, x, y, w, h int) bool {
	c := hits[y*w+x]
	same := func(i int) bool { return hits[i].shape == c.shape && hits[i].face == c.face }
	return (x == 0 || same(y*w+x-1)) && (x == w-1 || same(y*w+x+1)) &&
		(y == 0 || same((y-1)*w+x)) && (y == h-1 || same((y+1)*w+x))
}

// visTol is the relative depth difference below which the other view's hit
// is taken as the same surface point (rounding only: real occluders are
// millimetres to metres nearer).
const visTol = 1e-6
