package train

import (
	"fmt"
	"hash"
	"hash/fnv"
	"slices"

	"github.com/chewxy/hm"
	"github.com/parallaxdepth/parallax/model/internal/cpu"
	G "gorgonia.org/gorgonia"
	"gorgonia.org/tensor"
)

// kernelOp is the one gorgonia Op behind every operator of this package: a
// named call of a cpu or loss kernel over float32 tensors of fixed shapes.
// Each instance belongs to one node: it owns the output buffer it returns
// from Do, and its Hashcode covers the kind, the layer name, the settings
// and every shape, so that gorgonia never merges two layers that look
// alike.
type kernelOp struct {
	kind     string // "conv", "conv.dx", "elu", ...
	name     string // the layer name; part of the hash
	param    string // the settings, as text; part of the hash
	inShapes []tensor.Shape
	outShape tensor.Shape

	// run computes the output into out from the inputs, its kernels on
	// at most procs goroutines; a scalar input arrives as a slice of one
	// value and a scalar output is out[0].
	run   func(procs cpu.Procs, out []float32, in [][]float32) error
	procs cpu.Procs // Session.SetWorkers
	// plan is a convolution's plan (its forward op only), whose forward
	// scratch the graph's convolutions share (shareConvScratch).
	plan *cpu.Conv2D
	// diff says, per input, whether grad builds its gradient; nil means
	// no input is differentiable.
	diff []bool
	grad func(inputs G.Nodes, output, grad *G.Node) (G.Nodes, error)

	out       *tensor.Dense
	outData   []float32
	scalar    G.F32
	scalarOut [1]float32
	ins       [][]float32
	one       [][1]float32
}

func newKernelOp(kind, name, param string, out tensor.Shape, in ...tensor.Shape) *kernelOp {
	return &kernelOp{kind: kind, name: name, param: param, inShapes: in, outShape: out,
		ins: make([][]float32, len(in)), one: make([][1]float32, len(in))}
}

func typeOfShape(s tensor.Shape) hm.Type {
	if s.IsScalar() {
		return tensor.Float32
	}
	return G.TensorType{Dims: len(s), Of: tensor.Float32}
}

// Arity returns the number of inputs.
func (op *kernelOp) Arity() int { return len(op.inShapes) }

// Type returns the function type, float32 tensors of the fixed ranks.
func (op *kernelOp) Type() hm.Type {
	ts := make(hm.Types, 0, len(op.inShapes)+1)
	for _, s := range op.inShapes {
		ts = append(ts, typeOfShape(s))
	}
	ts = append(ts, typeOfShape(op.outShape))
	return hm.NewFnType(ts...)
}

// InferShape checks the input shapes and returns the output shape.
func (op *kernelOp) InferShape(ds ...G.DimSizer) (tensor.Shape, error) {
	if len(ds) != len(op.inShapes) {
		return nil, fmt.Errorf("train: %s %q: %d inputs, want %d", op.kind, op.name, len(ds), len(op.inShapes))
	}
	for i, d := range ds {
		s, ok := d.(tensor.Shape)
		if !ok {
			return nil, fmt.Errorf("train: %s %q: input %d has no shape", op.kind, op.name, i)
		}
		if !sameShape(s, op.inShapes[i]) {
			return nil, fmt.Errorf("train: %s %q: input %d has shape %v, want %v", op.kind, op.name, i, s, op.inShapes[i])
		}
	}
	return op.outShape.Clone(), nil
}

func sameShape(a, b tensor.Shape) bool {
	if a.IsScalar() && b.IsScalar() {
		return true
	}
	return slices.Equal([]int(a), []int(b))
}

// Do runs the kernel. It returns the op's own output buffer, overwritten
// on every call (see the package documentation for what that means for
// values read after a run).
func (op *kernelOp) Do(vals ...G.Value) (G.Value, error) {
	if len(vals) != len(op.inShapes) {
		return nil, fmt.Errorf("train: %s %q: %d inputs, want %d", op.kind, op.name, len(vals), len(op.inShapes))
	}
	for i, v := range vals {
		d, err := op.data(i, v)
		if err != nil {
			return nil, err
		}
		op.ins[i] = d
	}
	var out []float32
	if op.outShape.IsScalar() {
		out = op.scalarOut[:]
		if err := op.run(op.procs, out, op.ins); err != nil {
			return nil, err
		}
		op.scalar = G.F32(out[0])
		clear(op.ins)
		return &op.scalar, nil
	}
	if op.out == nil {
		op.outData = make([]float32, op.outShape.TotalSize())
		op.out = tensor.New(tensor.WithShape(op.outShape.Clone()...), tensor.WithBacking(op.outData))
	}
	if err := op.run(op.procs, op.outData, op.ins); err != nil {
		return nil, err
	}
	clear(op.ins)
	return op.out, nil
}

// data returns the float32 values of input i after checking its shape.
func (op *kernelOp) data(i int, v G.Value) ([]float32, error) {
	want := op.inShapes[i]
	switch x := v.(type) {
	case *G.F32:
		if !want.IsScalar() {
			return nil, fmt.Errorf("train: %s %q: input %d is a scalar, want shape %v", op.kind, op.name, i, want)
		}
		op.one[i][0] = float32(*x)
		return op.one[i][:], nil
	case *G.F64:
		if !want.IsScalar() {
			return nil, fmt.Errorf("train: %s %q: input %d is a scalar, want shape %v", op.kind, op.name, i, want)
		}
		op.one[i][0] = float32(*x)
		return op.one[i][:], nil
	case *tensor.Dense:
		if x.Dtype() != tensor.Float32 {
			return nil, fmt.Errorf("train: %s %q: input %d is %v, want float32", op.kind, op.name, i, x.Dtype())
		}
		if want.IsScalar() {
			if x.Size() != 1 {
				return nil, fmt.Errorf("train: %s %q: input %d has shape %v, want a scalar", op.kind, op.name, i, x.Shape())
			}
		} else if !sameShape(x.Shape(), want) {
			return nil, fmt.Errorf("train: %s %q: input %d has shape %v, want %v", op.kind, op.name, i, x.Shape(), want)
		}
		if x.RequiresIterator() {
			return nil, fmt.Errorf("train: %s %q: input %d is not contiguous", op.kind, op.name, i)
		}
		d := x.Float32s() // no interface boxing, unlike Data()
		if n := want.TotalSize(); len(d) != n && !(want.IsScalar() && len(d) == 1) {
			return nil, fmt.Errorf("train: %s %q: input %d has %d values, want %d", op.kind, op.name, i, len(d), n)
		}
		return d, nil
	}
	return nil, fmt.Errorf("train: %s %q: input %d is a %T, want a float32 tensor", op.kind, op.name, i, v)
}

// ReturnsPtr returns false: the output is not one of the inputs.
func (op *kernelOp) ReturnsPtr() bool { return false }

// CallsExtern returns false.
func (op *kernelOp) CallsExtern() bool { return false }

// OverwritesInput returns -1: no input is overwritten.
func (op *kernelOp) OverwritesInput() int { return -1 }

// WriteHash writes the kind, the layer name, the settings and the shapes.
func (op *kernelOp) WriteHash(h hash.Hash) {
	fmt.Fprintf(h, "parallax/%s %q {%s} %v -> %v", op.kind, op.name, op.param, op.inShapes, op.outShape)
}

// Hashcode returns the FNV-1a hash of WriteHash.
func (op *kernelOp) Hashcode() uint32 {
	h := fnv.New32a()
	op.WriteHash(h)
	return h.Sum32()
}

// String returns the kind and the layer name.
func (op *kernelOp) String() string { return op.kind + " " + op.name }

// DiffWRT says which inputs have a gradient.
func (op *kernelOp) DiffWRT(inputs int) []bool {
	r := make([]bool, inputs)
	copy(r, op.diff)
	return r
}

// SymDiff builds the gradient nodes, each another kernelOp.
func (op *kernelOp) SymDiff(inputs G.Nodes, output, grad *G.Node) (G.Nodes, error) {
	if op.grad == nil {
		return nil, fmt.Errorf("train: %s %q has no gradient", op.kind, op.name)
	}
	return op.grad(inputs, output, grad)
}

// apply adds op to the graph as a node called name over children.
func apply(op *kernelOp, name string, children ...*G.Node) (*G.Node, error) {
	n, err := G.ApplyOpWithName(op, name, children...)
	if err != nil {
		return nil, fmt.Errorf("train: %s %q: %w", op.kind, op.name, err)
	}
	return n, nil
}

// shape4 returns the shape of x after checking that it has rank 4.
func shape4(what string, x *G.Node) (n, c, h, w int, err error) {
	if x == nil {
		return 0, 0, 0, 0, fmt.Errorf("train: %s: nil node", what)
	}
	s := x.Shape()
	if len(s) != 4 {
		return 0, 0, 0, 0, fmt.Errorf("train: %s: input %q has shape %v, want (N, C, H, W)", what, x.Name(), s)
	}
	for _, d := range s {
		if d <= 0 {
			return 0, 0, 0, 0, fmt.Errorf("train: %s: input %q has shape %v", what, x.Name(), s)
		}
	}
	if x.Dtype() != tensor.Float32 {
		return 0, 0, 0, 0, fmt.Errorf("train: %s: input %q is %v, want float32", what, x.Name(), x.Dtype())
	}
	return s[0], s[1], s[2], s[3], nil
}
