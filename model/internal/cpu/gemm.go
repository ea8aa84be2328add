package cpu

import (
	"fmt"
	"runtime"

	"github.com/parallaxdepth/parallax/internal/parallel"
)

// Block sizes of the GEMM driver, in elements. A kc×nr panel of B and an
// mr×kc panel of A are what a micro-kernel call streams; an mc×kc block of
// A and a kc×nc block of B are packed per pass and stay in L2.
const (
	blockK = 256
	blockM = 128
	blockN = 480
)

// Sgemm computes C = op(A)·op(B), or C += op(A)·op(B) when accumulate is
// true, for row-major matrices: op(A) is m×k and op(B) is k×n. If transA is
// false A is stored m×k with leading dimension lda, otherwise A holds op(A)ᵀ
// stored k×m; likewise for B with transB (k×n or n×k, leading dimension
// ldb). C is m×n with leading dimension ldc. The work is split over
// goroutines with parallel.For. Sgemm does not allocate in steady state.
//
// Sgemm panics if a dimension is negative, a leading dimension is smaller
// than its row length, or a slice is too short for its shape.
func Sgemm(transA, transB bool, m, n, k int, a []float32, lda int, b []float32, ldb int, c []float32, ldc int, accumulate bool) {
	if m < 0 || n < 0 || k < 0 {
		panic(fmt.Sprintf("cpu.Sgemm: negative dimension m=%d n=%d k=%d", m, n, k))
	}
	ar, ac := m, k
	if transA {
		ar, ac = k, m
	}
	br, bc := k, n
	if transB {
		br, bc = n, k
	}
	checkMatrix("A", a, ar, ac, lda)
	checkMatrix("B", b, br, bc, ldb)
	checkMatrix("C", c, m, n, ldc)
	if m == 0 || n == 0 {
		return
	}
	if k == 0 {
		if !accumulate {
			for i := range m {
				clear(c[i*ldc : i*ldc+n])
			}
		}
		return
	}
	var s *sgemmCall
	select {
	case s = <-freeSgemm:
	default:
		s = new(sgemmCall)
	}
	op := &s.op
	op.m, op.n, op.k = m, n, k
	op.a, op.b = &s.pa, &s.pb
	op.c, op.ldc, op.accumulate, op.rowBias = c, ldc, accumulate, nil
	op.ci0, op.cj0 = 0, 0
	s.pa = matrixPacker{data: a, ld: lda, trans: transA, rows: m, cols: k}
	s.pb = matrixPacker{data: b, ld: ldb, trans: !transB, rows: n, cols: k}
	// Pack all of A once, shared by the goroutines, when it is reused by
	// more than one column stripe.
	op.apackAll = nil
	if n > blockN {
		mpad := (m + kern.mr - 1) / kern.mr * kern.mr
		if cap(s.apack) < mpad*k {
			s.apack = make([]float32, mpad*k)
		}
		op.apackAll = s.apack[:mpad*k]
	}
	s.op.run(&s.set)
	s.pa, s.pb, s.op.c, s.op.apackAll = matrixPacker{}, matrixPacker{}, nil, nil
	select {
	case freeSgemm <- s:
	default:
	}
}

func checkMatrix(name string, x []float32, rows, cols, ld int) {
	if ld < max(cols, 1) {
		panic(fmt.Sprintf("cpu.Sgemm: leading dimension of %s is %d, less than its %d columns", name, ld, cols))
	}
	if rows > 0 && cols > 0 && len(x) < (rows-1)*ld+cols {
		panic(fmt.Sprintf("cpu.Sgemm: %s has %d values, a %d×%d matrix with leading dimension %d needs %d",
			name, len(x), rows, cols, ld, (rows-1)*ld+cols))
	}
}

// sgemmCall holds what one Sgemm call needs, pooled so that calls do not
// allocate.
type sgemmCall struct {
	op     gemmOp
	pa, pb matrixPacker
	set    workspaceSet
	apack  []float32
}

// freeSgemm recycles call state, workspaces included, between Sgemm calls;
// a channel never drops its contents, unlike sync.Pool.
var freeSgemm = make(chan *sgemmCall, 8)

// packer packs panels of one GEMM operand. The operand is seen as a
// rows×cols matrix whose cols run along the reduction dimension k: A is
// m×k, and B is presented as its transpose, n×k.
//
// pack writes rows [r0, r0+nr) of columns [k0, k0+kc) into dst in
// micro-panel order: dst[kk*w+i] is element (r0+i, k0+kk) for i < nr, and 0
// for nr <= i < w, where w is the micro-panel width.
type packer interface {
	pack(dst []float32, w, r0, nr, k0, kc int)
}

// matrixPacker packs a plain row-major matrix. If trans is false the
// matrix is stored as rows×cols (element (r, k) at data[r*ld+k]); otherwise
// it is stored transposed (element (r, k) at data[k*ld+r]).
type matrixPacker struct {
	data       []float32
	ld         int
	trans      bool
	rows, cols int
}

func (p *matrixPacker) pack(dst []float32, w, r0, nr, k0, kc int) {
	d := dst[:kc*w]
	if p.trans {
		for kk := range kc {
			row := p.data[(k0+kk)*p.ld+r0:]
			out := d[kk*w : kk*w+w]
			copy(out[:nr], row[:nr])
			clear(out[nr:])
		}
		return
	}
	if nr == 8 && w == 8 {
		ld := p.ld
		base := r0*ld + k0
		r := p.data[base : base+7*ld+kc]
		for kk := range kc {
			o := d[kk*8 : kk*8+8 : kk*8+8]
			o[0] = r[kk]
			o[1] = r[ld+kk]
			o[2] = r[2*ld+kk]
			o[3] = r[3*ld+kk]
			o[4] = r[4*ld+kk]
			o[5] = r[5*ld+kk]
			o[6] = r[6*ld+kk]
			o[7] = r[7*ld+kk]
		}
		return
	}
	if nr < w {
		clear(d)
	}
	for i := range nr {
		row := p.data[(r0+i)*p.ld+k0 : (r0+i)*p.ld+k0+kc]
		for kk, v := range row {
			d[kk*w+i] = v
		}
	}
}

// gemmOp is one product C (+)= A·B with packers for both operands.
type gemmOp struct {
	m, n, k    int
	a, b       packer
	c          []float32
	ldc        int
	accumulate bool
	// ci0, cj0 are the row and column of op's C that c[0] holds, so that a
	// buffer can hold just a block of the product.
	ci0, cj0 int
	// rowBias, if not nil, is added to every row i of C as rowBias[i]
	// once the full product is in place.
	rowBias []float32

	// apackAll, if not nil, receives all of A packed before the product
	// starts (mpad·k values, mpad = m rounded up to mr): pass pc of the k
	// split starts at pc·mpad and holds mpad/mr panels of kc×mr.
	apackAll []float32

	// run state
	tilesN int
	set    *workspaceSet
	fn     func(lo, hi int)
	packFn func(lo, hi int)
	passes int
	step   int
}

// kSplit returns how ws.gemm splits [0, k) into passes: the number of
// passes and the length of all but the last.
func kSplit(k int) (passes, step int) {
	passes = (k + blockK - 1) / blockK
	return passes, (k + passes - 1) / passes
}

// prepack packs A micro-panels [lo, hi) of op.apackAll, numbered pass by
// pass.
func (op *gemmOp) prepack(lo, hi int) {
	mr := kern.mr
	panels := (op.m + mr - 1) / mr
	mpad := panels * mr
	for t := lo; t < hi; t++ {
		p, ir := t/panels*op.step, t%panels*mr
		kc := min(op.step, op.k-p)
		op.a.pack(op.apackAll[p*mpad+ir*kc:], mr, ir, min(mr, op.m-ir), p, kc)
	}
}

// run computes the product, splitting it into column stripes over
// goroutines.
func (op *gemmOp) run(set *workspaceSet) {
	set.ensure()
	op.set = set
	if op.fn == nil {
		op.fn = op.stripes
		op.packFn = op.prepack
	}
	if op.apackAll != nil {
		var passes int
		passes, op.step = kSplit(op.k)
		panels := (op.m + kern.mr - 1) / kern.mr
		parallel.For(passes*panels, max(1, passes*panels/(8*runtime.GOMAXPROCS(0))), op.packFn)
	}
	// Stripes of whole micro-panels; at least two per goroutine when the
	// matrix is wide enough, so that a slow goroutine does not hold the rest.
	procs := runtime.GOMAXPROCS(0)
	nr := kern.nr
	panels := (op.n + nr - 1) / nr
	per := max(1, min(blockN/nr, (panels+2*procs-1)/(2*procs)))
	if op.m*op.k < 1<<14 && panels < 64 {
		per = panels
	}
	op.tilesN = per * nr
	parallel.For((op.n+op.tilesN-1)/op.tilesN, 1, op.fn)
	op.set = nil
}

func (op *gemmOp) stripes(lo, hi int) {
	ws := op.set.get()
	for s := lo; s < hi; s++ {
		n0 := s * op.tilesN
		ws.gemm(op, 0, op.m, n0, min(n0+op.tilesN, op.n), 0, op.k)
	}
	op.set.put(ws)
}

// workspace holds the packing buffers of one goroutine.
type workspace struct {
	apack, bpack []float32
	tile         []float32
}

func newWorkspace() *workspace {
	mr, nr := kern.mr, kern.nr
	mc := (blockM + mr - 1) / mr * mr
	nc := (blockN + nr - 1) / nr * nr
	return &workspace{
		apack: make([]float32, mc*blockK),
		bpack: make([]float32, nc*blockK),
		tile:  make([]float32, mr*nr),
	}
}

// workspaceSet is a free list of workspaces, one per goroutine that may run
// at the same time.
type workspaceSet struct {
	free chan *workspace
	// mr, nr record the kernel the workspaces were sized for.
	mr, nr int
}

// ensure makes the free list hold GOMAXPROCS workspaces sized for the
// current kernel.
func (s *workspaceSet) ensure() {
	procs := runtime.GOMAXPROCS(0)
	if s.free != nil && cap(s.free) >= procs && s.mr == kern.mr && s.nr == kern.nr {
		return
	}
	s.free = make(chan *workspace, procs)
	s.mr, s.nr = kern.mr, kern.nr
	for range procs {
		s.free <- newWorkspace()
	}
}

func (s *workspaceSet) get() *workspace  { return <-s.free }
func (s *workspaceSet) put(w *workspace) { s.free <- w }

// gemm computes the block C[m0:m1, n0:n1] (+)= A[m0:m1, k0:k1]·B[k0:k1, n0:n1]
// of op, adding op.rowBias when k1 == op.k. The block is overwritten on
// the pass over k0 unless op.accumulate is set.
func (ws *workspace) gemm(op *gemmOp, m0, m1, n0, n1, k0, k1 int) {
	mr, nr := kern.mr, kern.nr
	// Split k into near-equal passes of at most blockK.
	_, step := kSplit(k1 - k0)
	mpad := (op.m + mr - 1) / mr * mr
	for pc := k0; pc < k1; pc += step {
		kc := min(step, k1-pc)
		acc := op.accumulate || pc > k0
		last := pc+kc == op.k
		for jc := n0; jc < n1; jc += blockN {
			nc := min(blockN, n1-jc)
			for jr := 0; jr < nc; jr += nr {
				op.b.pack(ws.bpack[jr*kc:], nr, jc+jr, min(nr, nc-jr), pc, kc)
			}
			for ic := m0; ic < m1; ic += blockM {
				mc := min(blockM, m1-ic)
				ap := ws.apack
				if op.apackAll != nil {
					ap = op.apackAll[pc*mpad+ic*kc:]
				} else {
					for ir := 0; ir < mc; ir += mr {
						op.a.pack(ap[ir*kc:], mr, ic+ir, min(mr, mc-ir), pc, kc)
					}
				}
				ws.macro(op, ap, ic, mc, jc, nc, kc, acc, last)
			}
		}
	}
}

// macro runs the micro-kernel over one packed mc×kc block of A and kc×nc
// block of B.
func (ws *workspace) macro(op *gemmOp, ap []float32, ic, mc, jc, nc, kc int, acc, last bool) {
	mr, nr := kern.mr, kern.nr
	ldc := op.ldc
	for jr := 0; jr < nc; jr += nr {
		b := ws.bpack[jr*kc : jr*kc+kc*nr]
		w := min(nr, nc-jr)
		for ir := 0; ir < mc; ir += mr {
			a := ap[ir*kc : ir*kc+kc*mr]
			h := min(mr, mc-ir)
			off := (ic+ir-op.ci0)*ldc + jc + jr - op.cj0
			if h == mr && w == nr {
				kern.fn(kc, a, b, op.c[off:off+(mr-1)*ldc+nr], ldc, acc)
				if last && op.rowBias != nil {
					for i := range mr {
						addScalar(op.c[off+i*ldc:off+i*ldc+nr], op.rowBias[ic+ir+i])
					}
				}
				continue
			}
			// Edge tile: compute the whole tile aside, then copy its
			// valid part.
			t := ws.tile
			kern.fn(kc, a, b, t, nr, false)
			for i := range h {
				src := t[i*nr : i*nr+w]
				dst := op.c[off+i*ldc : off+i*ldc+w]
				if last && op.rowBias != nil {
					addScalar(src, op.rowBias[ic+ir+i])
				}
				if acc {
					for j, v := range src {
						dst[j] += v
					}
				} else {
					copy(dst, src)
				}
			}
		}
	}
}

func addScalar(x []float32, v float32) {
	for i := range x {
		x[i] += v
	}
}
