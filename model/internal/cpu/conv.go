package cpu

import (
	"fmt"
	"math"
	"runtime"

	"github.com/parallaxdepth/parallax/internal/parallel"
)

// Padding selects how a convolution fills input pixels outside the image.
type Padding uint8

const (
	// ZeroPad reads 0 outside the image.
	ZeroPad Padding = iota
	// ReflectPad mirrors the image about its edge pixels without repeating
	// them (PyTorch's padding_mode="reflect"); it needs Pad < H and Pad < W.
	ReflectPad
)

// String returns the constant's name, or "Padding(N)" for an undefined value.
func (p Padding) String() string {
	switch p {
	case ZeroPad:
		return "ZeroPad"
	case ReflectPad:
		return "ReflectPad"
	}
	return fmt.Sprintf("Padding(%d)", uint8(p))
}

// ConvParams describes a 2-D convolution layer with a square kernel.
type ConvParams struct {
	// InC and OutC are the input and output channel counts.
	InC, OutC int
	// Kernel is the kernel side (1 and 3 are the sizes the network uses;
	// any size of at least 1 works).
	Kernel int
	// Stride is the step between output pixels, in input pixels.
	// If Stride is 0 it is defaulted to 1.
	Stride int
	// Dilation is the spacing of the kernel taps. If Dilation is 0 it is
	// defaulted to 1.
	Dilation int
	// Pad is the number of padded pixels on every side.
	Pad int
	// Padding is how the padded pixels are filled; the zero value is
	// ZeroPad.
	Padding Padding
	// ForwardOnly makes a plan for Forward alone, without the workspaces
	// of the gradients (inference: about half of a plan's memory at the
	// network's shapes). Backward on such a plan panics. Default false.
	ForwardOnly bool
}

// Conv2D is a convolution plan for one input shape (N, InC, H, W): it
// owns the workspaces, so Forward and Backward do not allocate in steady
// state. A Conv2D is not safe for concurrent use; its methods split their
// work over goroutines themselves.
//
// The output has shape (N, OutC, Ho, Wo) with
// Ho = (H + 2·Pad − Dilation·(Kernel−1) − 1)/Stride + 1, likewise Wo.
//
// Apart from 1×1 stride-1 unpadded layers, a plan holds a padded copy of a
// batch of input, the input gradient on the same padded grid, and a padded
// copy of the output gradient (twice for the weight gradient's grid):
// about N·(2·InC·Hp·Wp + 2·OutC·(Ho+2·span)·(Wo+2·span)) values, with
// Hp = H+2·Pad, Wp = W+2·Pad and span = Dilation·(Kernel−1).
//
// The weight gradient also multiplies the padded input at the dropped grid
// columns by exact zeros, so an Inf in the input can turn into NaN in
// weights whose true gradient does not see that pixel.
type Conv2D struct {
	p     ConvParams
	n     int
	g     convGeom
	kdim  int // InC·Kernel²
	pix   int // Ho·Wo
	ident bool

	// state of the current call
	x, w, b, y, dy, dx []float32
	wPack, wTPack      matrixPacker

	workers []*convWorker
	free    chan *convWorker
	mr, nr  int

	fwdStripe, dwStripe, dxBlock int
	fwdFn, dwFn, dxFn            func(lo, hi int)

	// The im2col weight gradient (see weightGrad): pieces of dwStripe
	// pixels of one image, dealt into dwParts partial sums held in dwPart,
	// and the output cut into dwMG×dwNG blocks of blockM×blockN.
	dwPieces, dwParts, dwMG, dwNG int
	dwPart                        []float32

	// The padded-grid path (all but 1×1 stride-1 unpadded layers): fd
	// computes the forward pass and holds the padded input for the weight
	// gradient, gg the output gradient on fd's grid; for stride 1, bd the
	// input gradient as a convolution of the padded output gradient with
	// the flipped weights, into dxpad. Other strides take the input
	// gradient through im2col and the GEMM.
	fd, bd *direct
	shared bool // fd's xpad and wpack come from ShareForwardScratch
	gg     *gradGrid
	dxpad  []float32
	// For strides above 1, phases compute the phase planes of dxpad from
	// dq, the output gradient zero-padded by pq into hq×wq planes.
	phases     []*direct
	dq         []float32
	pq, hq, wq int
	task       convTask
	taskFn     func(lo, hi int)
	maxProcs   int // SetMaxProcs
	// state of the current call on the stride-1 path
	src, dst []float32
}

// convTask selects what taskFn does on the stride-1 path.
type convTask uint8

const (
	taskPadX convTask = iota
	taskForward
	taskPadDy
	taskInputGrad
	taskFold
	taskFillGrid
	taskWeightGrad
	taskPadDq
	taskPhaseGrad
	taskFoldPhases
	taskBiasGrad
)

// convWorker is what one goroutine needs for a unit of convolution work.
type convWorker struct {
	ws   *workspace
	op   gemmOp
	col  colPacker
	colT colTPacker
	mat  matrixPacker // an image as a plain matrix (1×1 fast path, dY)
	mat2 matrixPacker
	dcol []float32 // a block of the im2col gradient
	cbuf []float32 // an output block of the stride-1 path
}

// im2colOnly makes new plans take the im2col path for every layer, so that
// tests can check it; otherwise only 1×1, stride-1, unpadded layers (where
// im2col is the input itself) do.
var im2colOnly bool

// maxElems bounds every tensor a plan handles so that index arithmetic
// stays far from overflow: 2^31 values where int has 64 bits, and a quarter
// of the int range (2^29) where it has 32, which leaves room for the
// padded grids, slack and gradient buffers sized from the checked ones.
const maxElems = min(1<<31, math.MaxInt>>2)

// fitsElems reports whether the product of the factors is positive and
// below maxElems. It multiplies in int64 and checks before each step, so
// sizes from data cannot overflow into a small product on any int size.
func fitsElems(factors ...int) bool {
	p := int64(1)
	for _, f := range factors {
		if f <= 0 || p > (maxElems-1)/int64(f) {
			return false
		}
		p *= int64(f)
	}
	return true
}

// NewConv2D returns a plan for convolving batches of n images of h×w
// pixels with the layer p. It returns an error if a size is not positive,
// the kernel does not fit the padded input, reflection padding is not
// smaller than the image, or a tensor would be absurdly large.
func NewConv2D(p ConvParams, n, h, w int) (*Conv2D, error) {
	if p.Stride == 0 {
		p.Stride = 1
	}
	if p.Dilation == 0 {
		p.Dilation = 1
	}
	switch {
	case p.InC <= 0 || p.OutC <= 0 || p.Kernel <= 0:
		return nil, fmt.Errorf("cpu: conv needs positive channels and kernel, got in %d out %d kernel %d", p.InC, p.OutC, p.Kernel)
	case p.Stride < 0 || p.Dilation < 0 || p.Pad < 0:
		return nil, fmt.Errorf("cpu: conv stride %d, dilation %d and padding %d must not be negative", p.Stride, p.Dilation, p.Pad)
	case n <= 0 || h <= 0 || w <= 0:
		return nil, fmt.Errorf("cpu: conv input shape (%d, %d, %d, %d) is not positive", n, p.InC, h, w)
	case p.Padding != ZeroPad && p.Padding != ReflectPad:
		return nil, fmt.Errorf("cpu: unknown padding %v", p.Padding)
	case p.Padding == ReflectPad && (p.Pad >= h || p.Pad >= w):
		return nil, fmt.Errorf("cpu: reflection padding %d needs an input larger than %d×%d", p.Pad, h, w)
	}
	// Every size below is checked before it is formed, in int64, so that
	// no product or sum wraps around where int has 32 bits.
	tooLarge := fmt.Errorf("cpu: conv of (%d, %d, %d, %d) with %+v is too large", n, p.InC, h, w, p)
	hp64, wp64 := int64(h)+2*int64(p.Pad), int64(w)+2*int64(p.Pad)
	span64 := int64(p.Dilation)*(int64(p.Kernel)-1) + 1
	if hp64 >= maxElems || wp64 >= maxElems || span64 >= maxElems || int64(p.Stride) >= maxElems {
		return nil, tooLarge
	}
	hp, wp, span := int(hp64), int(wp64), int(span64)
	if hp < span || wp < span {
		return nil, fmt.Errorf("cpu: kernel span %d exceeds the padded input %d×%d", span, hp, wp)
	}
	ho := (hp-span)/p.Stride + 1
	wo := (wp-span)/p.Stride + 1
	if !fitsElems(n, p.InC, h, w) || !fitsElems(n, p.OutC, ho, wo) || !fitsElems(p.OutC, p.InC, p.Kernel, p.Kernel) ||
		!fitsElems(p.InC, p.Kernel, p.Kernel, ho, wo) || !fitsElems(n, p.InC, hp, wp) ||
		!fitsElems(n, p.OutC, ho+2*span, wo+2*span) || !fitsElems(n, p.InC, hp+p.Stride-1, wp+p.Stride-1) {
		return nil, tooLarge
	}
	c := &Conv2D{
		p: p, n: n,
		g: convGeom{
			c: p.InC, h: h, w: w,
			k: p.Kernel, s: p.Stride, d: p.Dilation, pad: p.Pad,
			reflect: p.Padding == ReflectPad,
			ho:      ho, wo: wo,
		},
		kdim:  p.InC * p.Kernel * p.Kernel,
		pix:   ho * wo,
		ident: p.Kernel == 1 && p.Stride == 1 && p.Pad == 0,
	}
	c.fwdFn = c.forwardUnits
	c.dwFn = c.weightGradUnits
	c.dxFn = c.inputGradUnits
	c.taskFn = c.runTask
	if !c.ident && !im2colOnly {
		c.fd = newDirect(p.InC, p.OutC, h, w, p.Kernel, p.Stride, p.Dilation, p.Pad, p.Padding == ReflectPad, n)
		span := (p.Kernel - 1) * p.Dilation
		if p.ForwardOnly {
			// no gradient workspaces
		} else if p.Stride == 1 {
			c.bd = newDirect(p.OutC, p.InC, ho, wo, p.Kernel, 1, p.Dilation, span, false, n)
		} else {
			fd, s := c.fd, p.Stride
			c.pq = span / s
			c.hq, c.wq = max(ho+2*c.pq, fd.hph+c.pq), max(wo+2*c.pq, fd.wph+c.pq)
			c.dq = make([]float32, n*p.OutC*c.hq*c.wq+c.wq+128)
			for ry := range s {
				for rx := range s {
					c.phases = append(c.phases, newPhaseGrad(fd, ry, rx, c.pq, c.hq, c.wq, c.dq))
				}
			}
		}
		if !p.ForwardOnly {
			c.dxpad = make([]float32, n*p.InC*c.fd.plane)
		}
	}
	c.makeWorkers()
	return c, nil
}

// splitUnits is how many units of work the im2col weight gradient (which
// adds partial sums) and the input gradient's channel blocks aim for.
// It is a constant, not GOMAXPROCS: the way a sum is grouped then depends
// only on the shapes, so results are bit for bit the same on any number of
// threads. 16 keeps 2 units per goroutine up to 8 cores.
const splitUnits = 16

// makeWorkers sizes one worker per goroutine for the current micro-kernel.
func (c *Conv2D) makeWorkers() {
	procs := runtime.GOMAXPROCS(0)
	c.mr, c.nr = kern.mr, kern.nr
	kk2 := c.p.Kernel * c.p.Kernel

	// Forward stripes may follow GOMAXPROCS: every output value is one
	// sum in a fixed order whatever the stripes are (they start on
	// multiples of nr, so the tiles do not move).
	panels := (c.pix + c.nr - 1) / c.nr
	units := max(1, 2*procs/c.n) // image stripes wanted per image
	c.fwdStripe = max(1, min(blockN/c.nr, (panels+units-1)/units)) * c.nr

	fixed := max(1, splitUnits/c.n) // per image, independent of GOMAXPROCS

	// Input gradient: blocks of whole input channels, so that blocks never
	// write the same pixels of dx.
	c.dxBlock = max(1, min((c.p.InC+fixed-1)/fixed, max(1, 2*blockM/kk2)))

	c.workers = make([]*convWorker, procs)
	c.free = make(chan *convWorker, procs)
	dcolLen, cbufLen := c.dxBlock*kk2*blockN, 0
	c.dwPart = nil
	if c.p.ForwardOnly {
		dcolLen = 0
	} else if c.fd == nil {
		// Weight gradient: split the pixels (the reduction) into stripes.
		c.dwStripe = max(blockK, (c.pix+fixed-1)/fixed)
		c.dwPieces = c.n * ((c.pix + c.dwStripe - 1) / c.dwStripe)
		c.dwMG = (c.p.OutC + blockM - 1) / blockM
		c.dwNG = (c.kdim + blockN - 1) / blockN
		c.dwParts = max(1, min(c.dwPieces, (splitUnits+c.dwMG*c.dwNG-1)/(c.dwMG*c.dwNG), maxPartial/(c.p.OutC*c.kdim)+1))
		c.dwPart = make([]float32, c.dwParts*c.p.OutC*c.kdim)
	}
	if c.fd != nil {
		c.fd.size(procs)
		if !c.p.ForwardOnly && (c.gg == nil || c.gg.mo != kern.mo || c.gg.mk != kern.mk || c.gg.lanes != kern.lanes) {
			c.gg = newGradGrid(c.fd)
		}
		cbufLen = c.fd.mpad * c.fd.ncb
		if c.bd != nil {
			c.bd.size(procs)
			cbufLen = max(cbufLen, c.bd.mpad*c.bd.ncb)
		}
		for _, ph := range c.phases {
			ph.size(procs)
			cbufLen = max(cbufLen, ph.mpad*ph.ncb)
		}
		dcolLen = 0
	}
	for i := range c.workers {
		wk := &convWorker{
			dcol: make([]float32, dcolLen),
			cbuf: make([]float32, cbufLen),
		}
		if c.fd == nil {
			// Only the im2col path runs the GEMM: the padded-grid
			// passes, forward and backward, need no GEMM workspace.
			wk.ws = newWorkspace()
		}
		wk.col.g, wk.colT.g = &c.g, &c.g
		wk.op.fn = nil
		c.workers[i] = wk
		c.free <- wk
	}
}

// refresh rebuilds the workers if the micro-kernel or GOMAXPROCS changed.
func (c *Conv2D) refresh() {
	if c.mr != kern.mr || c.nr != kern.nr || len(c.workers) < runtime.GOMAXPROCS(0) {
		c.makeWorkers()
	}
}

// ForwardScratch returns the lengths of the two forward workspaces of the
// plan, its padded input and its packed weights (0, 0 for a plan without
// them), for ShareForwardScratch.
func (c *Conv2D) ForwardScratch() (xpad, wpack int) {
	if c.fd == nil {
		return 0, 0
	}
	return len(c.fd.xpad), len(c.fd.wpack)
}

// ShareForwardScratch makes a plan use xpad and wpack (at least the
// lengths ForwardScratch gives) as its forward workspaces, so that the
// plans of a network, which run one after another, share one pair of
// buffers; Forward then clears them before use, and so does Backward for
// the padded input it takes the weight gradient from (a plan with
// gradients pads its input again for Backward, so nothing is kept between
// the two). Plans that share buffers must not run at the same time. It
// panics on buffers that are too short.
func (c *Conv2D) ShareForwardScratch(xpad, wpack []float32) {
	if c.fd == nil {
		return
	}
	c.refresh()
	nx, nw := c.ForwardScratch()
	if len(xpad) < nx || len(wpack) < nw {
		panic(fmt.Sprintf("cpu: ShareForwardScratch: buffers of %d and %d values, the plan needs %d and %d", len(xpad), len(wpack), nx, nw))
	}
	c.fd.xpad, c.fd.wpack, c.shared = xpad[:nx], wpack[:nw], true
}

// SetMaxProcs bounds the goroutines each later call of the plan uses, as
// Procs(n) does for the operators; 0 (the default) means GOMAXPROCS.
func (c *Conv2D) SetMaxProcs(n Procs) { c.maxProcs = int(n) }

// OutShape returns the output shape (N, OutC, Ho, Wo).
func (c *Conv2D) OutShape() (n, ch, h, w int) { return c.n, c.p.OutC, c.g.ho, c.g.wo }

// InShape returns the input shape (N, InC, H, W).
func (c *Conv2D) InShape() (n, ch, h, w int) { return c.n, c.p.InC, c.g.h, c.g.w }

// Params returns the layer, with defaults filled in.
func (c *Conv2D) Params() ConvParams { return c.p }

// WeightLen returns the number of weights, OutC·InC·Kernel².
func (c *Conv2D) WeightLen() int { return c.p.OutC * c.kdim }

// FLOPs returns the floating-point operations of one Forward call,
// counting a multiply-add as two. Backward with both dx and dw costs twice
// as much.
func (c *Conv2D) FLOPs() float64 {
	return 2 * float64(c.n) * float64(c.p.OutC) * float64(c.pix) * float64(c.kdim)
}

func (c *Conv2D) check(name string, s []float32, want int, what string) {
	if len(s) != want {
		panic(fmt.Sprintf("cpu.Conv2D.%s: %s has %d values, shape needs %d", name, what, len(s), want))
	}
}

// Forward computes y = conv(x, weight) + bias. x has shape (N, InC, H, W),
// weight (OutC, InC, Kernel, Kernel) in OIHW order, bias OutC values or
// nil for none, and y (N, OutC, Ho, Wo) is overwritten.
//
// Forward panics if a slice length disagrees with the plan's shapes.
func (c *Conv2D) Forward(y, x, weight, bias []float32) {
	c.check("Forward", x, c.n*c.p.InC*c.g.h*c.g.w, "x")
	c.check("Forward", weight, c.WeightLen(), "weight")
	c.check("Forward", y, c.n*c.p.OutC*c.pix, "y")
	if bias != nil {
		c.check("Forward", bias, c.p.OutC, "bias")
	}
	c.refresh()
	if c.fd != nil {
		if c.shared {
			// Another plan used them: what padding the input and packing
			// the weights leave unwritten must read as zeros, as in
			// buffers of our own.
			c.fd.clearUnwritten(c.n * c.p.InC)
			clear(c.fd.wpack)
		}
		c.fd.packWeights(weight, false)
		c.fd.bias, c.fd.dst = bias, y
		c.runTasks(taskPadX, c.n*c.p.InC, x, nil)
		c.runTasks(taskForward, c.fd.units(), nil, nil)
		c.fd.bias, c.fd.dst = nil, nil
		return
	}
	c.x, c.w, c.b, c.y = x, weight, bias, y
	c.wPack = matrixPacker{data: weight, ld: c.kdim, rows: c.p.OutC, cols: c.kdim}
	stripes := (c.pix + c.fwdStripe - 1) / c.fwdStripe
	parallel.ForN(c.maxProcs, c.n*stripes, 1, c.fwdFn)
	c.x, c.w, c.b, c.y = nil, nil, nil, nil
	c.wPack.data = nil
}

func (c *Conv2D) forwardUnits(lo, hi int) {
	wk := <-c.free
	stripes := (c.pix + c.fwdStripe - 1) / c.fwdStripe
	inLen, outLen := c.p.InC*c.g.h*c.g.w, c.p.OutC*c.pix
	op := &wk.op
	for u := lo; u < hi; u++ {
		img, s := u/stripes, u%stripes
		x := c.x[img*inLen : (img+1)*inLen]
		if c.ident {
			wk.mat = matrixPacker{data: x, ld: c.pix, trans: true, rows: c.pix, cols: c.p.InC}
			op.b = &wk.mat
		} else {
			wk.col.x = x
			op.b = &wk.col
		}
		op.m, op.n, op.k = c.p.OutC, c.pix, c.kdim
		op.a = &c.wPack
		op.c, op.ldc, op.ci0, op.cj0 = c.y[img*outLen:(img+1)*outLen], c.pix, 0, 0
		op.accumulate, op.rowBias = false, c.b
		p0 := s * c.fwdStripe
		wk.ws.gemm(op, 0, c.p.OutC, p0, min(p0+c.fwdStripe, c.pix), 0, c.kdim)
	}
	op.a, op.b, op.c, op.rowBias = nil, nil, nil, nil
	wk.col.x, wk.mat.data = nil, nil
	c.free <- wk
}

// runTasks runs n units of task t over goroutines; src and dst are the
// caller's tensors the task reads and writes.
func (c *Conv2D) runTasks(t convTask, n int, src, dst []float32) {
	c.task, c.src, c.dst = t, src, dst
	grain := 1
	switch t {
	case taskPadX, taskPadDy, taskFold, taskFillGrid, taskPadDq, taskFoldPhases, taskBiasGrad:
		grain = max(1, n/(4*runtime.GOMAXPROCS(0)))
	}
	parallel.ForN(c.maxProcs, n, grain, c.taskFn)
	c.src, c.dst = nil, nil
}

func (c *Conv2D) runTask(lo, hi int) {
	fd, bd := c.fd, c.bd
	switch c.task {
	case taskPadX: // unit: one input plane
		inPlane := fd.h * fd.w
		for i := lo; i < hi; i++ {
			fd.padPlane(fd.xpad[i*fd.plane:(i+1)*fd.plane], c.src[i*inPlane:(i+1)*inPlane])
		}
	case taskPadDy: // unit: one output-gradient plane
		inPlane := bd.h * bd.w
		for i := lo; i < hi; i++ {
			bd.padPlane(bd.xpad[i*bd.plane:(i+1)*bd.plane], c.src[i*inPlane:(i+1)*inPlane])
		}
	case taskFold: // unit: one input-gradient plane
		inPlane := fd.h * fd.w
		for i := lo; i < hi; i++ {
			fd.foldPlane(c.dst[i*inPlane:(i+1)*inPlane], c.dxpad[i*fd.plane:(i+1)*fd.plane])
		}
	case taskFillGrid: // unit: one output-gradient plane
		for i := lo; i < hi; i++ {
			c.gg.fillRow(fd, i/c.p.OutC, i%c.p.OutC, c.src)
		}
	case taskBiasGrad: // unit: one output channel
		for o := lo; o < hi; o++ {
			var s float32
			for img := range c.n {
				off := (img*c.p.OutC + o) * c.pix
				s += sum8(c.src[off : off+c.pix])
			}
			c.dst[o] = s
		}
	case taskPadDq: // unit: one output-gradient plane
		plane := c.g.ho * c.g.wo
		for i := lo; i < hi; i++ {
			padZero(c.dq[i*c.hq*c.wq:(i+1)*c.hq*c.wq], c.src[i*plane:(i+1)*plane], c.g.ho, c.g.wo, c.pq, c.hq, c.wq)
		}
	case taskFoldPhases: // unit: one input-gradient plane
		inPlane := fd.h * fd.w
		for i := lo; i < hi; i++ {
			fd.foldPhases(c.dst[i*inPlane:(i+1)*inPlane], c.dxpad[i*fd.plane:(i+1)*fd.plane])
		}
	case taskPhaseGrad:
		wk := <-c.free
		per := c.phases[0].units()
		for u := lo; u < hi; u++ {
			c.phases[u/per].forwardUnit(u%per, wk.cbuf)
		}
		c.free <- wk
	case taskWeightGrad: // unit: one (partial sum, column group)
		for u := lo; u < hi; u++ {
			c.gg.weightUnit(fd, u)
		}
	case taskForward, taskInputGrad:
		wk := <-c.free
		for u := lo; u < hi; u++ {
			if c.task == taskForward {
				fd.forwardUnit(u, wk.cbuf)
			} else {
				bd.forwardUnit(u, wk.cbuf)
			}
		}
		c.free <- wk
	}
}
