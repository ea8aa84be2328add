package model

import (
	"fmt"
	"math"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// The validity rules Estimate applies once the maps are built at the
// input's resolution. A pixel that fails one is invalid in every map that
// describes its depth (Disparity and Depth: mask 0, value 0), so every file
// written from them drops it the same way; Confidence keeps its values, so
// a caller can see why a pixel went.

// ValidityOff, given as a threshold of ValidityOptions, turns that rule
// off. Any negative threshold does the same.
const ValidityOff = -1

// DefaultMinConfidence is ValidityOptions.MinConfidence's default, chosen
// with the default weights of step 17,045 on 100 held-out synthetic
// greenhouse pairs (seeds 1001–1100, never trained on;
// testdata/validity/measure) and measured again with the final embedded
// ones: of the 3,276,800 pixels with ground truth, 9.80 % are off by more
// than 3 px; the rig's range, this threshold and DefaultMinTexture together
// keep 89.7 % of the pixels and remove 59.6 % of those bad ones, leaving
// 4.4 % bad among the kept (the range alone removes 5.9 % of them, the
// range and this threshold alone 54.5 % while keeping 94.1 %; step 17,045:
// 89.4 % kept, 60.1 % removed). A pixel at 0.2 has
// predictions that disagree by 1.6 τ, 1.6 px at the default
// ConfidenceScale.
const DefaultMinConfidence = 0.2

// DefaultMinTexture is ValidityOptions.MinTexture's default: a luma
// standard deviation of 0.005, about 1.3 grey levels of 255, over a window
// of 9 × 9 pixels. The left-right confidence cannot tell a textureless
// image: on a uniform grey image the default weights give 0.75 everywhere,
// on a uniform green one 0.86, on a black one 0.01 (all at the network's
// size; testdata/validity/measure). Those images measure exactly 0 here,
// an image of 2 grey levels of noise around level 4 measures 0.003, while
// the rule alone keeps 95.2 % of the held-out greenhouse pixels above.
const DefaultMinTexture = 0.005

// TextureRadius is the radius in pixels, at the network's input size, of
// the square window (2·TextureRadius+1 pixels a side) over which the
// texture criterion measures the image's contrast. Of the radii 2, 4 and 6
// measured as for DefaultMinTexture, 2 removed 11 % of the greenhouse
// pixels at the same threshold (flat-looking but matchable surfaces) and 6
// hardly differed from 4.
const TextureRadius = 4

// ValidityOptions sets the rules that decide which pixels of an Estimate
// are valid. The zero value applies every rule with its default.
type ValidityOptions struct {
	// MinConfidence is the lowest left-right confidence (see LRConfidence)
	// of a valid pixel, in [0, 1]. If 0 it is defaulted to
	// DefaultMinConfidence; ValidityOff (or any negative value) turns the
	// rule off.
	MinConfidence float64
	// MinTexture is the lowest local contrast of a valid pixel: the
	// standard deviation of the luma (0.299 R + 0.587 G + 0.114 B, ITU-R
	// BT.601, values in [0, 1]) of the image as the network sees it, over a
	// window of 2·TextureRadius+1 pixels a side. A textureless or dark
	// region carries no signal to match, whatever the network predicts
	// there. If 0 it is defaulted to DefaultMinTexture; ValidityOff (or any
	// negative value) turns the rule off.
	MinTexture float64
	// KeepOutOfRange keeps pixels whose depth lies outside the rig's range
	// of interest [MinDepth, MaxDepth]. Default false: they are invalid.
	// Without a rig there is no range and no pixel is removed by it.
	KeepOutOfRange bool
}

// resolve returns o with its defaults filled in, or an error for a value
// out of range.
func (o ValidityOptions) resolve() (ValidityOptions, error) {
	if o.MinConfidence == 0 {
		o.MinConfidence = DefaultMinConfidence
	}
	if o.MinTexture == 0 {
		o.MinTexture = DefaultMinTexture
	}
	if math.IsNaN(o.MinConfidence) || o.MinConfidence > 1 {
		return o, fmt.Errorf("model: MinConfidence %v must be in [0, 1] (or ValidityOff)", o.MinConfidence)
	}
	if math.IsNaN(o.MinTexture) || o.MinTexture > 1 {
		return o, fmt.Errorf("model: MinTexture %v must be in [0, 1] (or ValidityOff)", o.MinTexture)
	}
	return o, nil
}

// applyValidity applies the rules of o (resolved) to est, whose Disparity
// and Confidence are filled and whose Depth and Rig are set when the
// Estimator has a rig. in is the left image as the network saw it (batch
// item 0, three channels), at any size: the texture map is measured on it
// and resampled to est's size.
func applyValidity(est *Estimate, in *planar.Image, o ValidityOptions) {
	disp := &est.Disparity.Map
	w, h := disp.Rect.Dx(), disp.Rect.Dy()
	if o.MinConfidence > 0 {
		c := &est.Confidence.Map
		lo := float32(o.MinConfidence)
		for y := range h {
			cp, cm := c.Pix[y*c.Stride:y*c.Stride+w], c.Mask[y*c.Stride:y*c.Stride+w]
			dp, dm := disp.Pix[y*disp.Stride:y*disp.Stride+w], disp.Mask[y*disp.Stride:y*disp.Stride+w]
			for x := range dm {
				if cm[x] == 0 || cp[x] < lo {
					dp[x], dm[x] = 0, 0
				}
			}
		}
	}
	if o.MinTexture > 0 && in != nil {
		tex := make([]float32, in.H*in.W)
		LocalContrast(tex, in, TextureRadius)
		full := tex
		if in.W != w || in.H != h {
			full = make([]float32, w*h)
			resizeBilinear(full, tex, in.W, in.H, w, h)
		}
		lo := float32(o.MinTexture)
		for y := range h {
			dp, dm := disp.Pix[y*disp.Stride:y*disp.Stride+w], disp.Mask[y*disp.Stride:y*disp.Stride+w]
			for x, t := range full[y*w : (y+1)*w] {
				if !(t >= lo) {
					dp[x], dm[x] = 0, 0
				}
			}
		}
	}
	if est.Depth == nil {
		return
	}
	invalidateWhere(&est.Depth.Map, disp)
	if !o.KeepOutOfRange {
		applyRange(est)
	}
}

// applyRange marks invalid in est's Disparity and Depth the pixels whose
// depth lies outside est.Rig's range of interest (depth.Rig.MaskRange); an
// estimate without depth or rig is left alone. Estimate.SetRig calls it
// too.
func applyRange(est *Estimate) {
	if est.Depth == nil || est.Rig == nil {
		return
	}
	est.Rig.MaskRange(est.Depth)
	invalidateWhere(&est.Disparity.Map, &est.Depth.Map)
}

// LocalContrast writes into dst (H·W values) the texture measure of image 0
// of in (three channels, RGB in [0, 1]): at each pixel, the standard
// deviation of the luma Y = 0.299 R + 0.587 G + 0.114 B (ITU-R BT.601) over
// the square window of radius r around it, cut to the image at the borders.
// A uniform image gives 0 everywhere; a step between levels a and b gives
// |a − b|/2 at a window split in half. It panics if in does not have three
// channels, dst does not have H·W values or r is negative.
func LocalContrast(dst []float32, in *planar.Image, r int) {
	if in == nil || in.C != 3 || len(dst) != in.H*in.W || r < 0 {
		panic("model.LocalContrast: need a three-channel image, H·W values and r ≥ 0")
	}
	h, w := in.H, in.W
	n := h * w
	// Integral images of Y and Y², in float64 so that the differences of
	// large sums keep their digits.
	s := make([]float64, (h+1)*(w+1))
	s2 := make([]float64, (h+1)*(w+1))
	rp, gp, bp := in.Pix[:n], in.Pix[n:2*n], in.Pix[2*n:3*n]
	for y := range h {
		var row, row2 float64
		for x := range w {
			i := y*w + x
			v := 0.299*float64(rp[i]) + 0.587*float64(gp[i]) + 0.114*float64(bp[i])
			row += v
			row2 += v * v
			k := (y+1)*(w+1) + x + 1
			s[k] = s[k-w-1] + row
			s2[k] = s2[k-w-1] + row2
		}
	}
	for y := range h {
		y0, y1 := max(y-r, 0), min(y+r+1, h)
		for x := range w {
			x0, x1 := max(x-r, 0), min(x+r+1, w)
			a, b, c, d := y0*(w+1)+x0, y0*(w+1)+x1, y1*(w+1)+x0, y1*(w+1)+x1
			cnt := float64((y1 - y0) * (x1 - x0))
			m := (s[d] - s[b] - s[c] + s[a]) / cnt
			v := (s2[d]-s2[b]-s2[c]+s2[a])/cnt - m*m
			dst[y*w+x] = float32(math.Sqrt(max(v, 0)))
		}
	}
}

// invalidateWhere marks invalid every pixel of dst that is invalid in
// src; the two maps have the same bounds.
func invalidateWhere(dst, src *depth.Map) {
	w, h := dst.Rect.Dx(), dst.Rect.Dy()
	for y := range h {
		dp, dm := dst.Pix[y*dst.Stride:y*dst.Stride+w], dst.Mask[y*dst.Stride:y*dst.Stride+w]
		sm := src.Mask[y*src.Stride : y*src.Stride+w]
		for x := range dm {
			if sm[x] == 0 {
				dp[x], dm[x] = 0, 0
			}
		}
	}
}
