package synth

import (
	"fmt"
	"math"
	"math/rand/v2"

	"github.com/parallaxdepth/parallax/depth"
)

// Variation selects the per-pair randomisation Generate applies on top of a
// style's scene (see Capture).
type Variation int

const (
	// VaryDefault is the style's own choice: VaryNone for Greenhouse and
	// Storage (their output is what it always was), VaryAll for the
	// other styles.
	VaryDefault Variation = iota
	// VaryNone renders the scene as built, with the style's fixed rig and
	// clean images: no camera effects.
	VaryNone
	// VaryAll draws a Capture per pair: the rig's field of view and
	// baseline, material colours, texture scales and patterns, lighting,
	// exposure, blur, sensor noise, a gain difference between the cameras
	// and a sub-pixel vertical misalignment of the right camera.
	VaryAll
)

// String returns the variation's name as ParseVariation reads it.
func (v Variation) String() string {
	switch v {
	case VaryDefault:
		return "default"
	case VaryNone:
		return "none"
	case VaryAll:
		return "all"
	}
	return fmt.Sprintf("Variation(%d)", int(v))
}

// ParseVariation returns the variation named name ("default", "none" or
// "all").
func ParseVariation(name string) (Variation, error) {
	for _, v := range []Variation{VaryDefault, VaryNone, VaryAll} {
		if name == v.String() {
			return v, nil
		}
	}
	return 0, fmt.Errorf("synth: unknown variation %q (want default, none or all)", name)
}

// resolve returns the variation in force for the style.
func (v Variation) resolve(s Style) (Variation, error) {
	switch v {
	case VaryDefault:
		if s == Greenhouse || s == Storage {
			return VaryNone, nil
		}
		return VaryAll, nil
	case VaryNone, VaryAll:
		return v, nil
	}
	return 0, fmt.Errorf("synth: unknown variation %d", int(v))
}

// Capture is the per-pair randomisation of a varied pair (Variation
// VaryAll). The images are developed from the rendered colour c (R, G, B
// in [0, 1]) of each view in this order: Gaussian blur of standard
// deviation Blur[view] pixels; multiplication by Gain[view][channel];
// additive zero-mean Gaussian noise of variance ReadNoise² + ShotNoise·c
// per pixel and channel, independent between pixels, channels and views;
// clamping to [0, 1]. The ground truth is not changed by any of these.
type Capture struct {
	// HFOV is the horizontal field of view, radians; with the image width
	// it fixes the focal length. Baseline is in metres. Both are also in
	// the pair's Rig.
	HFOV, Baseline float64

	// RowShift is the right camera's vertical misalignment in pixels: its
	// principal point sits RowShift pixels below the left camera's (the
	// pair's Rig describes the left camera). A surface point seen at the
	// centre of left pixel (x, y) with disparity d appears in the right
	// image at (x − d, y + RowShift), and one seen at right pixel (x, y)
	// at (x + d, y − RowShift) in the left image.
	RowShift float64

	// Gain is the exposure of each view per channel (white balance
	// included); the right view's differs from the left's by a few per
	// cent.
	Gain [2][3]float64

	// Blur is the standard deviation of each view's Gaussian blur, pixels
	// (0: none).
	Blur [2]float64

	// ReadNoise is the noise's standard deviation at black and ShotNoise
	// the variance it adds per unit of colour (both in [0, 1] units).
	ReadNoise, ShotNoise float64
}

// MaxVariedDisparity bounds the disparity of varied pairs, as a fraction
// of the width: each varied rig's baseline is capped so that
// Fx·Baseline/MinDepth ≤ MaxVariedDisparity·Width, and the scenes keep
// their surfaces beyond the rig's MinDepth at aspect ratios up to 1:1. A
// set of varied pairs has no single rig.json; use this as its d_max.
const MaxVariedDisparity = 0.28

// Ranges of the capture draws (uniform unless said otherwise). They are
// chosen for a small robot's stereo camera: wide to normal lenses, short
// baselines, a shaky mount, cheap sensors.
const (
	varyHFOVLo, varyHFOVHi         = 55 * math.Pi / 180, 95 * math.Pi / 180
	varyBaselineLo, varyBaselineHi = 0.04, 0.16 // log-uniform, metres
	varyRowShift                   = 0.5        // |RowShift| ≤ this, pixels
	varyExposureLo, varyExposureHi = 0.55, 1.6  // log-uniform
	varyWhiteBalance               = 0.1        // per-channel factor in [1−a, 1+a]
	varyGainDiff                   = 0.06       // right/left gain in [1−a, 1+a], plus ±1 % per channel
	varyNoBlur                     = 0.3        // probability of no blur
	varyBlurHi                     = 1.0        // pixels
	varyReadNoiseLo, varyReadNoise = 0.002, 0.015
	varyShotNoise                  = 2e-4
)

// varyStream returns the generator of a pair's capture draws, a stream
// of its own so that the scene of a varied pair is the unvaried scene
// with its materials and light changed, not another scene.
func varyStream(seed uint64, index int, style Style, stream uint64) *rand.Rand {
	s2 := uint64(index)*0x9e3779b97f4a7c15 ^ uint64(style+1)*0xbf58476d1ce4e5b9 ^ stream*0x94d049bb133111eb
	return rand.New(rand.NewPCG(seed^0x5851f42d4c957f2d, s2))
}

// Streams of varyStream.
const (
	streamCapture = 1
	streamNoise   = 2 // 2 for the left view, 3 for the right
)

func uniform(r *rand.Rand, lo, hi float64) float64 { return lo + (hi-lo)*r.Float64() }
func logUniform(r *rand.Rand, lo, hi float64) float64 {
	return math.Exp(uniform(r, math.Log(lo), math.Log(hi)))
}

// drawCapture draws a pair's capture for the style's minimum depth.
func drawCapture(r *rand.Rand, minDepth float64) Capture {
	var c Capture
	c.HFOV = uniform(r, varyHFOVLo, varyHFOVHi)
	// Disparity at minDepth: f·B/Z = W·B/(2·tan(hfov/2)·Z) ≤ MaxVariedDisparity·W.
	bMax := MaxVariedDisparity * 2 * math.Tan(c.HFOV/2) * minDepth
	c.Baseline = math.Min(logUniform(r, varyBaselineLo, varyBaselineHi), bMax)
	c.RowShift = uniform(r, -varyRowShift, varyRowShift)
	exposure := logUniform(r, varyExposureLo, varyExposureHi)
	diff := uniform(r, 1-varyGainDiff, 1+varyGainDiff)
	for k := 0; k < 3; k++ {
		wb := uniform(r, 1-varyWhiteBalance, 1+varyWhiteBalance)
		c.Gain[0][k] = exposure * wb
		c.Gain[1][k] = exposure * wb * diff * uniform(r, 0.99, 1.01)
	}
	if r.Float64() >= varyNoBlur {
		s := uniform(r, 0.2, varyBlurHi)
		c.Blur = [2]float64{s, s * uniform(r, 0.9, 1.1)}
	}
	c.ReadNoise = uniform(r, varyReadNoiseLo, varyReadNoise)
	c.ShotNoise = uniform(r, 0, varyShotNoise)
	return c
}

// variedRig returns the rig of a capture at the image size.
func variedRig(s Style, c *Capture, width, height int) (*depth.Rig, error) {
	sp, ok := s.spec()
	if !ok {
		return nil, fmt.Errorf("synth: unknown style %d", int(s))
	}
	sp.hfov, sp.baseline = c.HFOV, c.Baseline
	return sp.rig(s, width, height)
}

// varyScene changes the scene's materials and light: a hue rotation and
// saturation change for the whole scene with a jitter per material, a
// texture scale per material, now and then a material replaced by a random
// pattern in random colours, and a new light (direction, ambient and
// directional strength, including a low sun). Geometry is not changed.
func varyScene(sc *scene, r *rand.Rand) {
	hue := uniform(r, -0.6, 0.6)
	sat := uniform(r, 0.6, 1.4)
	for i := range sc.mats {
		m := &sc.mats[i]
		h := hue + uniform(r, -0.15, 0.15)
		s := sat * uniform(r, 0.85, 1.15)
		if r.Float64() < 0.15 {
			*m = randomMaterial(r, m.seed)
			continue
		}
		m.base = adjustColour(m.base, h, s)
		m.alt = adjustColour(m.alt, h, s)
		m.ink = adjustColour(m.ink, h, s)
		k := logUniform(r, 0.6, 1.7)
		m.scale *= k
		m.size2 *= k
		m.contrast = clamp01(m.contrast * uniform(r, 0.7, 1.3))
	}
	az := uniform(r, 0, 2*math.Pi)
	el := uniform(r, 0.25, 1.4)
	sc.light = vec3{math.Cos(az) * math.Cos(el), math.Sin(el), math.Sin(az) * math.Cos(el)}
	sc.ambient *= uniform(r, 0.7, 1.25)
	sc.diffuse *= uniform(r, 0.4, 1.6)
}

// randomMaterial returns a textured material of a random kind and colours.
func randomMaterial(r *rand.Rand, seed uint32) material {
	kinds := [...]texKind{texMottled, texSoil, texBoards, texTiles, texLabels, texPanels, texStripes}
	col := func() rgb { return rgb{r.Float64(), r.Float64(), r.Float64()} }
	return material{
		kind: kinds[r.IntN(len(kinds))],
		base: col(), alt: col(), ink: col(),
		scale: logUniform(r, 0.03, 0.6), size2: logUniform(r, 0.05, 0.8),
		density: uniform(r, 0.3, 0.9), contrast: uniform(r, 0.2, 0.8),
		seed: seed ^ 0x9e3779b9,
	}
}

// adjustColour rotates c's hue by angle radians about the grey axis and
// scales its saturation (distance from the grey axis) by sat.
func adjustColour(c rgb, angle, sat float64) rgb {
	// Rotation about the unit vector (1, 1, 1)/√3 (Rodrigues' formula).
	cs, sn := math.Cos(angle), math.Sin(angle)
	k := (1 - cs) / 3
	s3 := sn / math.Sqrt(3)
	rot := rgb{
		(cs+k)*c[0] + (k-s3)*c[1] + (k+s3)*c[2],
		(k+s3)*c[0] + (cs+k)*c[1] + (k-s3)*c[2],
		(k-s3)*c[0] + (k+s3)*c[1] + (cs+k)*c[2],
	}
	grey := (c[0] + c[1] + c[2]) / 3
	for i := range rot {
		rot[i] = clamp01(grey + (rot[i]-grey)*sat)
	}
	return rot
}

// develop applies the capture's blur, gain and noise to the pair's images
// in place (see Capture).
func develop(p *Pair, c *Capture, seed uint64, index int, style Style) {
	for v, img := range [2][]float32{p.Left.Pix, p.Right.Pix} {
		w, h := p.Rig.Width, p.Rig.Height
		plane := w * h
		noise := varyStream(seed, index, style, streamNoise+uint64(v))
		tmp := make([]float32, plane)
		for k := 0; k < 3; k++ {
			ch := img[k*plane : (k+1)*plane]
			if c.Blur[v] > 0 {
				gaussianBlur(ch, tmp, w, h, c.Blur[v])
			}
			g := c.Gain[v][k]
			for i, x := range ch {
				val := g * float64(x)
				sd := math.Sqrt(c.ReadNoise*c.ReadNoise + c.ShotNoise*math.Max(val, 0))
				ch[i] = float32(clamp01(val + sd*noise.NormFloat64()))
			}
		}
	}
}

// gaussianBlur blurs the w×h plane ch in place with a separable Gaussian of
// standard deviation sigma pixels, truncated at 3σ, repeating edge pixels;
// tmp is scratch of the same length.
func gaussianBlur(ch, tmp []float32, w, h int, sigma float64) {
	r := int(math.Ceil(3 * sigma))
	k := make([]float64, 2*r+1)
	var sum float64
	for i := -r; i <= r; i++ {
		k[i+r] = math.Exp(-float64(i*i) / (2 * sigma * sigma))
		sum += k[i+r]
	}
	for i := range k {
		k[i] /= sum
	}
	clampi := func(v, n int) int { return min(max(v, 0), n-1) }
	for y := 0; y < h; y++ {
		row := ch[y*w : (y+1)*w]
		for x := 0; x < w; x++ {
			var s float64
			for i := -r; i <= r; i++ {
				s += k[i+r] * float64(row[clampi(x+i, w)])
			}
			tmp[y*w+x] = float32(s)
		}
	}
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			var s float64
			for i := -r; i <= r; i++ {
				s += k[i+r] * float64(tmp[clampi(y+i, h)*w+x])
			}
			ch[y*w+x] = float32(s)
		}
	}
}
