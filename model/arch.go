package model

import (
	"encoding/json"
	"fmt"
	"strconv"
	"strings"
)

// Op is the operation of one Layer.
type Op int

// The operations a Layer can perform. Each maps to one kernel of the CPU
// engine and to one operator of the training graph.
const (
	// OpConv is a 2-D convolution with bias (weights OIHW), followed by the
	// layer's activation.
	OpConv Op = iota + 1
	// OpUpsample doubles the height and width of its input (Layer.Mode).
	OpUpsample
	// OpConcat concatenates its inputs along the channel axis, in order.
	OpConcat
	// OpScale computes Factor·x + Shift of its input (see Layer.PerWidth).
	OpScale
	// OpCorrelation is the matching cost of two feature tensors (the left
	// view's first) over Layer.Disps horizontal shifts (see
	// StereoArchName).
	OpCorrelation
	// OpWarp resamples its first input (the right view's features) at
	// x − d·W, d the one-channel disparity of its second input, a fraction
	// of the width (package warp, RebuildLeft, zeros outside).
	OpWarp
	// OpAdd adds its two inputs of equal shape.
	OpAdd
	// OpMatch is the classical matcher's estimate of the pair (Matching),
	// pooled to the layer's resolution: with 2 output channels, channel 0
	// the disparity in pixels at that resolution and channel 1 the
	// fraction found without filling; with 1, the disparity as a fraction
	// of the width. Its input is InputName of a stereo network.
	OpMatch
	// OpPairView picks one view of a stereo batch: its input holds the
	// tensors of N left views then of their N right views, and its output
	// the same 2N tensors as the views of the pair and of the mirrored,
	// swapped pair (Layer.View; see StereoArchName).
	OpPairView
)

var opNames = map[Op]string{OpConv: "conv", OpUpsample: "upsample", OpConcat: "concat", OpScale: "scale",
	OpCorrelation: "correlation", OpWarp: "warp", OpAdd: "add", OpPairView: "pairview", OpMatch: "match"}

// String returns the name of o as used in the text form of an Arch.
func (o Op) String() string { return enumString(opNames, o) }

// Activation is applied to the output of an OpConv layer.
type Activation int

// The activations.
const (
	// ActNone leaves the convolution output as it is.
	ActNone Activation = iota
	// ActELU is the exponential linear unit, x for x > 0 and e^x − 1 otherwise.
	ActELU
	// ActSigmoid is the logistic function 1 / (1 + e^−x).
	ActSigmoid
)

var actNames = map[Activation]string{ActNone: "none", ActELU: "elu", ActSigmoid: "sigmoid"}

// String returns the name of a.
func (a Activation) String() string { return enumString(actNames, a) }

// Padding says how a convolution reads outside its input.
type Padding int

// The paddings.
const (
	// PadZero reads zeros outside the input.
	PadZero Padding = iota
	// PadReflect mirrors the input about its first and last row and column,
	// without repeating the edge (…, x2, x1 | x0, x1, x2, …).
	PadReflect
)

var padNames = map[Padding]string{PadZero: "zero", PadReflect: "reflect"}

// String returns the name of p.
func (p Padding) String() string { return enumString(padNames, p) }

// Upsampling is the interpolation of an OpUpsample layer.
type Upsampling int

// The upsamplings.
const (
	// UpNearest repeats each input pixel in a 2×2 block.
	UpNearest Upsampling = iota
	// UpBilinear interpolates bilinearly (see package cpu for where the
	// output pixel centres fall).
	UpBilinear
)

var upNames = map[Upsampling]string{UpNearest: "nearest", UpBilinear: "bilinear"}

// String returns the name of u.
func (u Upsampling) String() string { return enumString(upNames, u) }

func enumString[K comparable](names map[K]string, k K) string {
	if s, ok := names[k]; ok {
		return s
	}
	return fmt.Sprintf("%T(%v)", k, any(k))
}

// TensorShape is the shape of one activation tensor of a single image: channels,
// height and width. A batch adds the leading N.
type TensorShape struct {
	C int `json:"c"`
	H int `json:"h"`
	W int `json:"w"`
}

// Len returns C·H·W.
func (s TensorShape) Len() int { return s.C * s.H * s.W }

// String formats the shape as "CxHxW".
func (s TensorShape) String() string { return fmt.Sprintf("%dx%dx%d", s.C, s.H, s.W) }

// Layer is one step of the network. Its output is the tensor named Name;
// Inputs name tensors produced by earlier layers or the network input
// (InputName). Only the fields of its Op are meaningful.
type Layer struct {
	Name   string
	Op     Op
	Inputs []string
	// Out is the output shape for one image.
	Out TensorShape

	// OpConv: kernel size (square), stride, padding width on each side,
	// dilation, padding mode and activation. The parameters are
	// Name+".weight" (Out.C × in channels × Kernel × Kernel, OIHW) and
	// Name+".bias" (Out.C).
	Kernel, Stride, Pad, Dilation int
	Padding                       Padding
	Act                           Activation

	// OpUpsample: interpolation.
	Mode Upsampling

	// OpScale: the layer computes f·x + Shift/Out.W, where f is Factor,
	// Factor/Out.W with PerWidth, or Factor·Out.W with TimesWidth. Out.W is
	// the tensor's width in pixels, so PerWidth turns a value in pixels at
	// that resolution into a fraction of the width, the unit of every
	// disparity, at any input size, and TimesWidth the reverse; Shift is in
	// pixels.
	Factor, Shift        float64
	PerWidth, TimesWidth bool

	// OpCorrelation: the number of shifts, 0 … Disps−1 pixels.
	Disps int

	// OpPairView: ViewLeft or ViewRight.
	View View
}

// ScaleShift returns the factor and shift an OpScale layer applies, with
// PerWidth and Shift resolved against its output width.
func (l *Layer) ScaleShift() (factor, shift float64) {
	factor = l.Factor
	if l.Out.W <= 0 {
		return factor, 0
	}
	if l.PerWidth {
		factor /= float64(l.Out.W)
	}
	if l.TimesWidth {
		factor *= float64(l.Out.W)
	}
	return factor, l.Shift / float64(l.Out.W)
}

// MarshalJSON writes the fields of l that its Op uses, with the enums as
// names ("conv", "reflect", "elu", "bilinear", ...).
func (l Layer) MarshalJSON() ([]byte, error) {
	type conv struct {
		Kernel   int    `json:"kernel"`
		Stride   int    `json:"stride"`
		Pad      int    `json:"pad"`
		Dilation int    `json:"dilation"`
		Padding  string `json:"padding"`
		Act      string `json:"act"`
	}
	v := struct {
		Name   string      `json:"name"`
		Op     string      `json:"op"`
		Inputs []string    `json:"inputs"`
		Out    TensorShape `json:"out"`
		*conv
		Mode       string  `json:"mode,omitempty"`
		Factor     float64 `json:"factor,omitempty"`
		Shift      float64 `json:"shift,omitempty"`
		PerWidth   bool    `json:"per_width,omitempty"`
		TimesWidth bool    `json:"times_width,omitempty"`
		Disps      int     `json:"disps,omitempty"`
		View       string  `json:"view,omitempty"`
	}{Name: l.Name, Op: l.Op.String(), Inputs: l.Inputs, Out: l.Out}
	switch l.Op {
	case OpConv:
		v.conv = &conv{l.Kernel, l.Stride, l.Pad, l.Dilation, l.Padding.String(), l.Act.String()}
	case OpUpsample:
		v.Mode = l.Mode.String()
	case OpScale:
		v.Factor, v.Shift, v.PerWidth, v.TimesWidth = l.Factor, l.Shift, l.PerWidth, l.TimesWidth
	case OpCorrelation:
		v.Disps = l.Disps
	case OpPairView:
		v.View = l.View.String()
	}
	return json.Marshal(v)
}

// Param is one learned tensor: its name and shape (OIHW for weights, [O] for
// biases).
type Param struct {
	Name  string `json:"name"`
	Shape []int  `json:"shape"`
}

// Len returns the number of values of p.
func (p Param) Len() int {
	n := 1
	for _, d := range p.Shape {
		n *= d
	}
	return n
}

// InputName is the tensor name of the network input, the left image
// (3 × Height × Width, RGB in [0, 1]).
const InputName = "image"

// Arch is the declarative description of the network for one Config: the
// ordered layer list, the shapes of every tensor and the learned
// parameters. The graph-free forward pass and the training graph both walk
// Layers in order; nothing else describes the network.
type Arch struct {
	Config Config `json:"config"`
	// Input is the shape of InputName.
	Input TensorShape `json:"input"`
	// Layers in evaluation order: every input of a layer is InputName or
	// the Name of an earlier layer.
	Layers []Layer `json:"layers"`
	// Outputs names the disparity outputs, 2 channels each (channel 0 the
	// left view's disparity d_L, channel 1 the right view's d_R, fractions
	// of the width in (0, DMax)), from full resolution (index 0) to ⅛.
	Outputs [Scales]string `json:"outputs"`
	// Params lists the learned tensors in layer order, weight before bias.
	Params []Param `json:"params"`

	shapes map[string]TensorShape
}

// OutputName returns the tensor name of the disparity at scale s
// (resolution 1/2^s): "disp0" … "disp3".
func OutputName(s int) string { return "disp" + strconv.Itoa(s) }

// Build returns the architecture for c (after defaults). It returns an
// error if c is invalid.
func Build(c Config) (*Arch, error) {
	if err := c.Validate(); err != nil {
		return nil, err
	}
	c = c.WithDefaults()
	if c.Arch == StereoArchName {
		return buildStereo(c), nil
	}
	a := &Arch{Config: c, Input: TensorShape{3, c.Height, c.Width}, shapes: map[string]TensorShape{InputName: {3, c.Height, c.Width}}}

	// Encoder: at each level a stride-2 convolution halves the resolution
	// and a stride-1 convolution refines it.
	prev := InputName
	enc := make([]string, Levels+1)
	for l := 1; l <= Levels; l++ {
		ch := c.Encoder[l-1]
		a.conv(fmt.Sprintf("enc%da", l), prev, ch, 2, ActELU)
		prev = a.conv(fmt.Sprintf("enc%db", l), fmt.Sprintf("enc%da", l), ch, 1, ActELU)
		enc[l] = prev
	}

	// Decoder: at level l (resolution 1/2^l) reduce the coarser features,
	// upsample them, join the encoder's skip at the same resolution and the
	// coarser disparity, then fuse. Levels 3 … 0 carry a disparity head.
	var disp string
	for l := Levels - 1; l >= 0; l-- {
		ch := c.Decoder[l]
		p := fmt.Sprintf("dec%d", l)
		red := a.conv(p+".reduce", prev, ch, 1, ActELU)
		up := a.upsample(p+".up", red, UpNearest)
		// The skip at full resolution is the image itself, for sharp edges.
		parts := []string{up, InputName}
		if l > 0 {
			parts[1] = enc[l]
		}
		if disp != "" {
			parts = append(parts, a.upsample(disp+".up", disp, UpBilinear))
		}
		prev = a.conv(p, a.concat(p+".cat", parts), ch, 1, ActELU)
		if l < Scales {
			h := a.conv(fmt.Sprintf("head%d", l), prev, 2, 1, ActSigmoid)
			disp = a.scale(OutputName(l), h, c.DMax)
			a.Outputs[l] = disp
		}
	}
	return a, nil
}

func (a *Arch) add(l Layer) string {
	a.Layers = append(a.Layers, l)
	a.shapes[l.Name] = l.Out
	return l.Name
}

func (a *Arch) conv(name, in string, out, stride int, act Activation) string {
	s := a.shapes[in]
	o := TensorShape{out, s.H / stride, s.W / stride}
	a.Params = append(a.Params,
		Param{Name: name + ".weight", Shape: []int{out, s.C, 3, 3}},
		Param{Name: name + ".bias", Shape: []int{out}})
	return a.add(Layer{Name: name, Op: OpConv, Inputs: []string{in}, Out: o,
		Kernel: 3, Stride: stride, Pad: 1, Dilation: 1, Padding: PadReflect, Act: act})
}

func (a *Arch) upsample(name, in string, m Upsampling) string {
	s := a.shapes[in]
	return a.add(Layer{Name: name, Op: OpUpsample, Inputs: []string{in}, Out: TensorShape{s.C, 2 * s.H, 2 * s.W}, Mode: m})
}

func (a *Arch) concat(name string, ins []string) string {
	if len(ins) == 1 {
		return ins[0]
	}
	o := a.shapes[ins[0]]
	o.C = 0
	for _, in := range ins {
		o.C += a.shapes[in].C
	}
	return a.add(Layer{Name: name, Op: OpConcat, Inputs: append([]string(nil), ins...), Out: o})
}

func (a *Arch) scale(name, in string, f float64) string {
	return a.add(Layer{Name: name, Op: OpScale, Inputs: []string{in}, Out: a.shapes[in], Factor: f})
}

// TensorShape returns the shape of the tensor called name (InputName or a layer
// name) for one image, and whether it exists.
func (a *Arch) Shape(name string) (TensorShape, bool) {
	if a.shapes == nil {
		a.shapes = map[string]TensorShape{InputName: a.Input}
		for _, l := range a.Layers {
			a.shapes[l.Name] = l.Out
		}
	}
	s, ok := a.shapes[name]
	return s, ok
}

// NumParams returns the number of learned values.
func (a *Arch) NumParams() int {
	n := 0
	for _, p := range a.Params {
		n += p.Len()
	}
	return n
}

// Param returns the parameter called name and whether it exists.
func (a *Arch) Param(name string) (Param, bool) {
	for _, p := range a.Params {
		if p.Name == name {
			return p, true
		}
	}
	return Param{}, false
}

// Summary returns a table of the layers, one per line: name, operation
// with its settings, inputs, output shape and parameter count, then the
// total.
func (a *Arch) Summary() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%-12s %-26s %-24s %-11s %8s\n", "layer", "op", "inputs", "out", "params")
	for _, l := range a.Layers {
		op := l.Op.String()
		params := 0
		switch l.Op {
		case OpConv:
			op = fmt.Sprintf("conv%dx%d/%d %s %s", l.Kernel, l.Kernel, l.Stride, l.Padding, l.Act)
			in, _ := a.Shape(l.Inputs[0])
			params = l.Out.C*in.C*l.Kernel*l.Kernel + l.Out.C
		case OpUpsample:
			op = "upsample2x " + l.Mode.String()
		case OpScale:
			f, sh := l.ScaleShift()
			op = fmt.Sprintf("scale %.4g %+.4g", f, sh)
		case OpCorrelation:
			op = fmt.Sprintf("correlation %d", l.Disps)
		case OpPairView:
			op = "pairview " + l.View.String()
		}
		fmt.Fprintf(&b, "%-12s %-26s %-24s %-11s %8d\n", l.Name, op, strings.Join(l.Inputs, ","), l.Out, params)
	}
	fmt.Fprintf(&b, "total %d parameters\n", a.NumParams())
	return b.String()
}
