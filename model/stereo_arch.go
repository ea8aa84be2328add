package model

import (
	"fmt"
	"math"
)

// StereoArchName names the stereo architecture; it is stored with the
// weights like ArchName. The network reads both rectified views:
//
//	image [left; right] 3×H×W ── f1a s2, f1b ── f2a s2, f2b ── f3a s2, f3b   (one encoder, both views)
//	 ⅛: cost3 = correlation(left f3, right f3) over StereoDisps shifts,
//	    cat(cost3, left f3, match3 = the matcher's estimate and validity)
//	    → agg3.0 … agg3.3 (dilations 1 2 4 1) → res3;
//	    disp3 = match3.d (the matcher's estimate) + res3 pixels
//	 ¼, ½: up = disp×2 bilinear; right f warped by up − StereoRadius px;
//	    cost = correlation(left f, warped) over 2·StereoRadius+1 shifts;
//	    ctx = refL.ctx(the coarser level's last features) ×2 nearest;
//	    cat(cost, left f, ctx, match, up in pixels)
//	    → refL.a, refL.b → resL; dispL = up + resL pixels
//	 1: up = disp1×2 bilinear; ctx = ref0.ctx(ref1.b) ×2 nearest;
//	    cat(left image, ctx, match0, up in pixels) → ref0.a → res0;
//	    disp0 = up + res0 pixels (version 1: without match0 and up)
//
// Every convolution is 3×3 with reflect padding as wide as its dilation (1
// where none is given) and is followed by an ELU, except the residuals resL
// (one channel, no activation). fLa and fLb have Config.Encoder[L−1]
// channels, agg3.k Decoder[3], and refL.ctx, refL.a and refL.b Decoder[L]
// (defaults DefaultStereoEncoder, DefaultStereoDecoder). The context of a
// level is refL.ctx applied at the coarser resolution to that level's last
// features: agg3.3 for ¼, ref2.b for ½, ref1.b for full resolution.
// correlation(a, b) over D shifts is the cost volume of C-channel features
// cost[k, y, x] = (1/C)·Σ_c a[c, y, x]·b[c, y, x−k] for k = 0 … D−1, and 0
// where x−k < 0. The warp reads the right features at x − d·W, bilinearly,
// zeros outside (OpWarp). "×2 bilinear" is as in the one-image network
// (package doc). matchL has two channels, the matcher's disparity in
// pixels of the level and the fraction of the pixels it found without
// filling, and match3.d one, the disparity as a fraction of the width;
// both are block means of the matcher's estimate (Matching.Pool).
//
// The matcher is package sgm on the grey pair (Matching) at full resolution
// (version 2; version 1 weights match at half resolution, Config.MatchLevel),
// holes filled along the rows; it has no gradient. The layers run on a
// batch of 2N: the encoder on the N left and then the N right views as
// they are; from there on (OpPairView) on the N pairs and the N mirrored,
// swapped pairs, whose left view is mirror(right) and right view
// mirror(left). It is the encoder's features that are mirrored (and, for
// the full-resolution step, the images): the encoder never sees a mirrored
// image, and as a convolution is not mirror-symmetric the two differ. The
// matcher runs on the mirrored, swapped pairs themselves. So each output
// dispS packs d_L (channel 0) and d_R mirrored back (channel 1), as the
// one-image network's outputs do. Residuals are in pixels of their level
// and every disparity a fraction of the width, so
// the weights run at any multiple of 32 (Estimator picks the size from the
// input). Freshly initialised weights prepared by train.PrepareHeads start
// at the matcher's estimate; training teaches the corrections.
const StereoArchName = "parallax-stereo"

// StereoArchVersion is the version of the stereo architecture that new
// weights get: 2, whose matcher runs at full resolution and whose
// full-resolution step reads it (three more input channels of ref0.a).
// Version 1 weights (matcher at half resolution, see Config.MatchLevel)
// still load and run as they were trained; Weights.UpgradeStereo turns them
// into version 2 weights that start from the same function of the matches.
const StereoArchVersion = 2

// StereoLevels is the number of resolutions of the stereo network: full,
// ½, ¼ and ⅛. Its input sides must still be multiples of SizeStep (32).
const StereoLevels = 4

// StereoDisps is the number of shifts of the coarse matching cost, at ⅛
// resolution: 8·StereoDisps = 192 pixels at the input's width. StereoRadius is the search radius of each refinement level, in
// pixels of that level.
const (
	StereoDisps  = 24
	StereoRadius = 2
)

// View selects the view of an OpPairView layer.
type View int

// The views of a stereo batch.
const (
	// ViewLeft is [left views; mirrored right views]: the left view of the
	// N pairs, then of the N mirrored, swapped pairs.
	ViewLeft View = iota
	// ViewRight is [right views; mirrored left views].
	ViewRight
)

var viewNames = map[View]string{ViewLeft: "left", ViewRight: "right"}

// String returns the name of v.
func (v View) String() string { return enumString(viewNames, v) }

// Default widths of the stereo network. Encoder entry i belongs to
// resolution 1/2^(i+1), decoder entry l to 1/2^l.
var (
	DefaultStereoEncoder = [StereoLevels - 1]int{16, 32, 64}
	DefaultStereoDecoder = [StereoLevels]int{8, 16, 32, 64}
)

// stereoAggDilations are the dilations of the coarse aggregation
// convolutions at ⅛ resolution: a receptive field of 33 coarse pixels that
// carries matches into textureless areas.
var stereoAggDilations = []int{1, 2, 4, 1}

// validateStereo checks the fields of a stereo Config that Validate does
// not check for both kinds.
func (c Config) validateStereo() error {
	for _, f := range []struct {
		name string
		v    []int
		n    int
	}{{"encoder", c.Encoder, StereoLevels - 1}, {"decoder", c.Decoder, StereoLevels}} {
		if len(f.v) != f.n {
			return fmt.Errorf("model: config: %s %s has %d widths, want %d", StereoArchName, f.name, len(f.v), f.n)
		}
		for i, v := range f.v {
			if v < 1 || v > MaxChannels {
				return fmt.Errorf("model: config: %s width %d at level %d is outside [1, %d]", f.name, v, i, MaxChannels)
			}
		}
	}
	if math.IsNaN(c.DMax) || c.DMax <= 0 || c.DMax > 1 {
		return fmt.Errorf("model: config: d_max %v must be in (0, 1] (a fraction of the width)", c.DMax)
	}
	return nil
}

// IsStereo reports whether a is a stereo architecture: its input holds
// both views and its outputs are one channel, walked on the pairs and their
// mirror images (see the package documentation).
func (a *Arch) IsStereo() bool { return a.Config.Arch == StereoArchName }

// The kinds of weights that Arch.Kind and Estimator.Kind return.
const (
	KindStereo   = "stereo"    // the network reads both views (EstimatePair)
	KindOneImage = "one-image" // the network reads the left view alone
)

// Kind returns KindStereo or KindOneImage, the kind of weights a names in
// errors.
func (a *Arch) Kind() string {
	if a.IsStereo() {
		return KindStereo
	}
	return KindOneImage
}

// buildStereo lays out the stereo network for c (valid, defaults filled).
//
// The list is walked on a batch of 2N: InputName holds the N left images
// then the N right images. One encoder computes the features of all 2N;
// from then on the batch is the N pairs and the N mirrored, swapped pairs
// (mirror(right), mirror(left)), whose left-view disparity is the mirror
// image of the pair's d_R (OpPairView). Each output is one channel: the
// first N images are d_L, the last N mirrored back are d_R (PackPair).
func buildStereo(c Config) *Arch {
	in := TensorShape{3, c.Height, c.Width}
	a := &Arch{Config: c, Input: in, shapes: map[string]TensorShape{InputName: in}}
	enc, dec := c.Encoder, c.Decoder

	var left, right [StereoLevels]string
	left[0] = a.pairView("view0.l", InputName, ViewLeft)
	prev := InputName
	for l := 1; l < StereoLevels; l++ {
		prev = a.conv(fmt.Sprintf("f%da", l), prev, enc[l-1], 2, ActELU)
		prev = a.conv(fmt.Sprintf("f%db", l), prev, enc[l-1], 1, ActELU)
		left[l] = a.pairView(fmt.Sprintf("view%d.l", l), prev, ViewLeft)
		right[l] = a.pairView(fmt.Sprintf("view%d.r", l), prev, ViewRight)
	}

	// Coarse cost at ⅛ and its aggregation with the matcher's estimate
	// into a correction of that estimate, in pixels at ⅛: the network
	// starts from the census-based semi-global match and learns where and
	// how to change it.
	top := StereoLevels - 1
	corr := a.correlation("cost3", left[top], right[top], StereoDisps)
	prev = a.concat("agg3.cat", []string{corr, left[top], a.match("match3", top, 2)})
	for i, d := range stereoAggDilations {
		prev = a.dilatedConv(fmt.Sprintf("agg3.%d", i), prev, dec[top], d, ActELU)
	}
	res := a.dilatedConv("res3", prev, 1, 1, ActNone)
	resFrac := a.add(Layer{Name: "agg3.res", Op: OpScale, Inputs: []string{res}, Out: a.shapes[res], Factor: 1, PerWidth: true})
	disp := a.add(Layer{Name: OutputName(top), Op: OpAdd, Inputs: []string{a.match("match3.d", top, 1), resFrac}, Out: a.shapes[res]})
	a.Outputs[top] = disp

	// Refinement: upsample the estimate, warp the right features by it
	// (less StereoRadius pixels, so the local cost spans −R … R), match,
	// and add a residual in pixels of the level. At full resolution the
	// residual comes from the left image and the coarser features alone.
	hidden := prev
	for l := top - 1; l >= 0; l-- {
		p := fmt.Sprintf("ref%d", l)
		up := a.upsample(p+".up", disp, UpBilinear)
		ctx := a.upsample(p+".ctx.up", a.conv(p+".ctx", hidden, dec[l], 1, ActELU), UpNearest)
		parts := []string{left[l], ctx}
		if l > 0 {
			shifted := a.add(Layer{Name: p + ".shift", Op: OpScale, Inputs: []string{up}, Out: a.shapes[up],
				Factor: 1, Shift: -StereoRadius})
			warped := a.add(Layer{Name: p + ".warp", Op: OpWarp, Inputs: []string{right[l], shifted}, Out: a.shapes[right[l]]})
			parts = append([]string{a.correlation(fmt.Sprintf("cost%d", l), left[l], warped, 2*StereoRadius+1)}, parts...)
			// The matcher's estimate beside the current one, both in
			// pixels of the level: their difference is the correction
			// wherever the matcher is right.
			px := a.add(Layer{Name: p + ".px", Op: OpScale, Inputs: []string{up}, Out: a.shapes[up], Factor: 1, TimesWidth: true})
			parts = append(parts, a.match(fmt.Sprintf("match%d", l), l, 2), px)
		} else if c.MatchLevel() == 0 {
			// Version 2: the full-resolution step sees the matcher's
			// full-resolution estimate too, so thin structures and object
			// edges can keep the matcher's sharp boundaries.
			px := a.add(Layer{Name: p + ".px", Op: OpScale, Inputs: []string{up}, Out: a.shapes[up], Factor: 1, TimesWidth: true})
			parts = append(parts, a.match("match0", 0, 2), px)
		}
		prev = a.conv(p+".a", a.concat(p+".cat", parts), dec[l], 1, ActELU)
		if l > 0 {
			prev = a.dilatedConv(p+".b", prev, dec[l], 1, ActELU)
		}
		hidden = prev
		res := a.dilatedConv(fmt.Sprintf("res%d", l), prev, 1, 1, ActNone)
		resFrac := a.add(Layer{Name: p + ".res", Op: OpScale, Inputs: []string{res}, Out: a.shapes[res], Factor: 1, PerWidth: true})
		disp = a.add(Layer{Name: OutputName(l), Op: OpAdd, Inputs: []string{up, resFrac}, Out: a.shapes[up]})
		a.Outputs[l] = disp
	}
	return a
}

func (a *Arch) match(name string, level, c int) string {
	in := a.Input
	return a.add(Layer{Name: name, Op: OpMatch, Inputs: []string{InputName}, Out: TensorShape{c, in.H >> level, in.W >> level}})
}

func (a *Arch) pairView(name, in string, v View) string {
	return a.add(Layer{Name: name, Op: OpPairView, Inputs: []string{in}, Out: a.shapes[in], View: v})
}

// dilatedConv adds a stride-1 3×3 convolution with its own parameters.
func (a *Arch) dilatedConv(name, in string, out, dilation int, act Activation) string {
	s := a.shapes[in]
	a.Params = append(a.Params,
		Param{Name: name + ".weight", Shape: []int{out, s.C, 3, 3}},
		Param{Name: name + ".bias", Shape: []int{out}})
	return a.add(Layer{Name: name, Op: OpConv, Inputs: []string{in}, Out: TensorShape{out, s.H, s.W},
		Kernel: 3, Stride: 1, Pad: dilation, Dilation: dilation, Padding: PadReflect, Act: act})
}

func (a *Arch) correlation(name, left, right string, disps int) string {
	s := a.shapes[left]
	return a.add(Layer{Name: name, Op: OpCorrelation, Inputs: []string{left, right}, Out: TensorShape{disps, s.H, s.W}, Disps: disps})
}

// UpgradeStereo turns version 1 stereo weights into version 2 weights: the
// input channels version 2 adds to ref0.a (the full-resolution match and
// the estimate in pixels, after the others) get zero weights, so the
// network computes what version 1 computes from its match inputs, now taken
// from the full-resolution matcher; training then teaches it to use them.
// It returns an error if w is not version 1 stereo weights.
func (w *Weights) UpgradeStereo() error {
	c := w.Config.WithDefaults()
	if c.Arch != StereoArchName || c.Version != 1 {
		return fmt.Errorf("model: upgrade: weights are %s version %d, want %s version 1", c.Arch, c.Version, StereoArchName)
	}
	if err := w.Check(); err != nil {
		return err
	}
	c.Version = 2
	a, err := Build(c)
	if err != nil {
		return err
	}
	params := make(map[string][]float32, len(w.Params))
	for _, p := range a.Params {
		old := w.Params[p.Name]
		if p.Name != "ref0.a.weight" {
			params[p.Name] = old
			continue
		}
		out, in, k := p.Shape[0], p.Shape[1], p.Shape[2]*p.Shape[3]
		oldIn := len(old) / (out * k)
		v := make([]float32, out*in*k)
		for o := range out {
			copy(v[o*in*k:o*in*k+oldIn*k], old[o*oldIn*k:(o+1)*oldIn*k])
		}
		params[p.Name] = v
	}
	w.Config, w.Params = c, params
	return w.Check()
}
