// Command gen writes the amd64 GEMM micro-kernels of package cpu with avo.
// Run it through go generate in the parent directory.
package main

import (
	"fmt"

	. "github.com/mmcloughlin/avo/build"
	. "github.com/mmcloughlin/avo/operand"
	"github.com/mmcloughlin/avo/reg"
)

const signature = "func(k int, a, b, c []float32, ldc int, acc bool)"

func main() {
	ConstraintExpr("!purego")
	kernel("kernelAVX512x8x48", 8, 3, 16, reg.Z0)
	kernel("kernelAVX2x4x24", 4, 3, 8, reg.Y0)
	indirect("indirectAVX512x8x48", 8, 3, 16, reg.Z0)
	indirect("indirectAVX2x4x24", 4, 3, 8, reg.Y0)
	dot("dotAVX512x4x6", 4, 6, 16, reg.Z0)
	dot("dotAVX2x3x3", 3, 3, 8, reg.Y0)
	Generate()
}

// kernel emits an mr×(nv·lanes) micro-kernel: accumulators for mr rows of
// nv vectors, nv vector loads of the packed B panel and one broadcast of
// the packed A panel per row and k step. first selects the register file
// (Y0 for AVX2, Z0 for AVX-512).
func kernel(name string, mr, nv, lanes int, first reg.VecPhysical) {
	TEXT(name, NOSPLIT, signature)
	Doc(fmt.Sprintf("%s computes one %d×%d tile; see microKernel.", name, mr, nv*lanes))
	nr := nv * lanes
	vbytes := 4 * lanes

	k := Load(Param("k"), GP64())
	a := Load(Param("a").Base(), GP64())
	b := Load(Param("b").Base(), GP64())

	t := newTile(mr, nv, first)

	TESTQ(k, k)
	JZ(LabelRef(name + "_tail"))
	Label(name + "_loop")
	for j := range nv {
		VMOVUPS(Mem{Base: b, Disp: j * vbytes}, t.bv[j])
	}
	t.fmaRows(a)
	ADDQ(Imm(uint64(4*mr)), a)
	ADDQ(Imm(uint64(4*nr)), b)
	DECQ(k)
	JNZ(LabelRef(name + "_loop"))

	t.store(name, vbytes)
}

// tile holds the registers of an mr×nv-vector micro-kernel (kernel,
// indirect): the accumulators, the B vectors of one k step, and the rest of
// the register file for the A broadcasts, used in rotation.
type tile struct {
	mr, nv int
	acc    [][]reg.VecPhysical
	bv, bc []reg.VecPhysical
}

// newTile assigns the registers from first on and emits the zeroing of
// the accumulators.
func newTile(mr, nv int, first reg.VecPhysical) tile {
	vec := func(i int) reg.VecPhysical { return vecReg(first, i) }
	t := tile{mr: mr, nv: nv, acc: make([][]reg.VecPhysical, mr), bv: make([]reg.VecPhysical, nv)}
	for i := range mr {
		t.acc[i] = make([]reg.VecPhysical, nv)
		for j := range nv {
			t.acc[i][j] = vec(i*nv + j)
			zero(first, t.acc[i][j])
		}
	}
	for j := range nv {
		t.bv[j] = vec(mr*nv + j)
	}
	total := 16
	if first == reg.Z0 {
		total = 32
	}
	for i := mr*nv + nv; i < total; i++ {
		t.bc = append(t.bc, vec(i))
	}
	return t
}

// fmaRows emits one k step's products: each row's A value broadcast from
// the packed panel at a, times the B vectors, into the accumulators.
func (t tile) fmaRows(a reg.Register) {
	for i := range t.mr {
		r := t.bc[i%len(t.bc)]
		VBROADCASTSS(Mem{Base: a, Disp: 4 * i}, r)
		for j := range t.nv {
			VFMADD231PS(t.bv[j], r, t.acc[i][j])
		}
	}
}

// store emits the kernel's end, from its _tail label: the accumulators
// added to C when acc is set, then stored to C's rows (ldc apart).
func (t tile) store(name string, vbytes int) {
	Label(name + "_tail")
	c := Load(Param("c").Base(), GP64())
	ldc := Load(Param("ldc"), GP64())
	SHLQ(Imm(2), ldc)
	flag := Load(Param("acc"), GP8())
	TESTB(flag, flag)
	JZ(LabelRef(name + "_store"))
	row := GP64()
	MOVQ(c, row)
	for i := range t.mr {
		for j := range t.nv {
			VADDPS(Mem{Base: row, Disp: j * vbytes}, t.acc[i][j], t.acc[i][j])
		}
		if i < t.mr-1 {
			ADDQ(ldc, row)
		}
	}
	Label(name + "_store")
	for i := range t.mr {
		for j := range t.nv {
			VMOVUPS(t.acc[i][j], Mem{Base: c, Disp: j * vbytes})
		}
		if i < t.mr-1 {
			ADDQ(ldc, c)
		}
	}
	VZEROUPPER()
	RET()
}

func vecReg(first reg.VecPhysical, i int) reg.VecPhysical {
	if first == reg.Z0 {
		return []reg.VecPhysical{
			reg.Z0, reg.Z1, reg.Z2, reg.Z3, reg.Z4, reg.Z5, reg.Z6, reg.Z7,
			reg.Z8, reg.Z9, reg.Z10, reg.Z11, reg.Z12, reg.Z13, reg.Z14, reg.Z15,
			reg.Z16, reg.Z17, reg.Z18, reg.Z19, reg.Z20, reg.Z21, reg.Z22, reg.Z23,
			reg.Z24, reg.Z25, reg.Z26, reg.Z27, reg.Z28, reg.Z29, reg.Z30, reg.Z31,
		}[i]
	}
	return []reg.VecPhysical{
		reg.Y0, reg.Y1, reg.Y2, reg.Y3, reg.Y4, reg.Y5, reg.Y6, reg.Y7,
		reg.Y8, reg.Y9, reg.Y10, reg.Y11, reg.Y12, reg.Y13, reg.Y14, reg.Y15,
	}[i]
}

// zero clears a register; AVX-512F has no VXORPS on Z registers without
// DQ, so it uses VPXORD there.
func zero(first, r reg.VecPhysical) {
	if first == reg.Z0 {
		VPXORD(r, r, r)
		return
	}
	VXORPS(r, r, r)
}

// indirect emits the micro-kernel of the stride-1 convolution: like kernel,
// but row k of B is read straight from the padded input at b[offs[k]:].
func indirect(name string, mr, nv, lanes int, first reg.VecPhysical) {
	TEXT(name, NOSPLIT, "func(k int, a, b []float32, offs []int, c []float32, ldc int, acc bool)")
	Doc(fmt.Sprintf("%s computes one %d×%d tile; see indirectKernel.", name, mr, nv*lanes))
	vbytes := 4 * lanes

	k := Load(Param("k"), GP64())
	a := Load(Param("a").Base(), GP64())
	b := Load(Param("b").Base(), GP64())
	offs := Load(Param("offs").Base(), GP64())
	off := GP64()

	t := newTile(mr, nv, first)

	TESTQ(k, k)
	JZ(LabelRef(name + "_tail"))
	Label(name + "_loop")
	MOVQ(Mem{Base: offs}, off)
	for j := range nv {
		VMOVUPS(Mem{Base: b, Index: off, Scale: 4, Disp: j * vbytes}, t.bv[j])
	}
	t.fmaRows(a)
	ADDQ(Imm(uint64(4*mr)), a)
	ADDQ(Imm(8), offs)
	DECQ(k)
	JNZ(LabelRef(name + "_loop"))

	t.store(name, vbytes)
}

// dot emits the weight-gradient kernel: out[i*ldo+j] += Σ_t y[i*ldy+t] ·
// x[offs[j]+t] for i < mo, j < mk and t < n, n a multiple of lanes. Each
// output keeps a vector of partial sums that is reduced at the end.
func dot(name string, mo, mk, lanes int, first reg.VecPhysical) {
	TEXT(name, NOSPLIT, "func(n int, y []float32, ldy int, x []float32, offs []int, out []float32, ldo int)")
	Doc(fmt.Sprintf("%s accumulates one %d×%d block of dot products; see dotKernel.", name, mo, mk))
	vec := func(i int) reg.VecPhysical { return vecReg(first, i) }
	vbytes := 4 * lanes
	// Registers: mo row loads, one x load, then the accumulators, all
	// above the low temporaries used by the reduction.
	ys := make([]reg.VecPhysical, mo)
	for i := range mo {
		ys[i] = vec(i)
	}
	xr := vec(mo)
	base := 8
	if first != reg.Z0 {
		base = mo + 1
	}
	acc := make([][]reg.VecPhysical, mo)
	for i := range mo {
		acc[i] = make([]reg.VecPhysical, mk)
		for j := range mk {
			acc[i][j] = vec(base + i*mk + j)
			zero(first, acc[i][j])
		}
	}

	n := Load(Param("n"), GP64())
	SHLQ(Imm(2), n)
	y := Load(Param("y").Base(), GP64())
	ldy := Load(Param("ldy"), GP64())
	SHLQ(Imm(2), ldy)
	yp := make([]reg.GPVirtual, mo)
	for i := range mo {
		yp[i] = GP64()
		MOVQ(y, yp[i])
		if i < mo-1 {
			ADDQ(ldy, y)
		}
	}
	x := Load(Param("x").Base(), GP64())
	offs := Load(Param("offs").Base(), GP64())
	xp := make([]reg.GPVirtual, mk)
	for j := range mk {
		xp[j] = GP64()
		MOVQ(Mem{Base: offs, Disp: 8 * j}, xp[j])
		SHLQ(Imm(2), xp[j])
		ADDQ(x, xp[j])
	}
	t := GP64()
	XORQ(t, t)
	TESTQ(n, n)
	JZ(LabelRef(name + "_reduce"))
	Label(name + "_loop")
	for i := range mo {
		VMOVUPS(Mem{Base: yp[i], Index: t, Scale: 1}, ys[i])
	}
	for j := range mk {
		VMOVUPS(Mem{Base: xp[j], Index: t, Scale: 1}, xr)
		for i := range mo {
			VFMADD231PS(ys[i], xr, acc[i][j])
		}
	}
	ADDQ(Imm(uint64(vbytes)), t)
	CMPQ(t, n)
	JB(LabelRef(name + "_loop"))

	Label(name + "_reduce")
	out := Load(Param("out").Base(), GP64())
	ldo := Load(Param("ldo"), GP64())
	SHLQ(Imm(2), ldo)
	for i := range mo {
		for j := range mk {
			reduceAdd(first, acc[i][j], Mem{Base: out, Disp: 4 * j})
		}
		if i < mo-1 {
			ADDQ(ldo, out)
		}
	}
	VZEROUPPER()
	RET()
}

// reduceAdd adds the lanes of v to the float32 at m, using the low
// registers 0, 1 (Z/Y/X) as temporaries so that only VEX encodings are
// needed after the first step.
func reduceAdd(first, v reg.VecPhysical, m Mem) {
	if first == reg.Z0 {
		VMOVAPS(v, reg.Z1)
		VEXTRACTF64X4(Imm(1), reg.Z1, reg.Y0)
		VADDPS(reg.Y1, reg.Y0, reg.Y0)
	} else {
		VMOVAPS(v, reg.Y0)
	}
	// Y0 now holds 8 partial sums; for AVX2 v is above Y1, so Y1 is free.
	VEXTRACTF128(Imm(1), reg.Y0, reg.X1)
	VADDPS(reg.X1, reg.X0, reg.X0)
	VMOVHLPS(reg.X0, reg.X0, reg.X1)
	VADDPS(reg.X1, reg.X0, reg.X0)
	VPSHUFD(Imm(1), reg.X0, reg.X1)
	VADDSS(reg.X1, reg.X0, reg.X0)
	VADDSS(m, reg.X0, reg.X0)
	VMOVSS(reg.X0, m)
}
