package cpu

import (
	"encoding/binary"
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
)

// forEachPath runs f for every micro-kernel on the padded-grid path, and
// for the portable kernel on the im2col path.
func forEachPath(t *testing.T, f func(t *testing.T)) {
	t.Run("grid", func(t *testing.T) { forEachKernel(t, f) })
	t.Run("im2col", func(t *testing.T) {
		saved := kern
		im2colOnly = true
		defer func() { im2colOnly, kern = false, saved }()
		t.Run("best", f)
		kern = genericKernel
		t.Run("generic", f)
	})
}

// refConv is the obviously-correct direct convolution, in float64.
type refConv struct {
	p          ConvParams
	n, h, w    int
	ho, wo     int
	stride, dl int
}

func newRefConv(p ConvParams, n, h, w int) refConv {
	r := refConv{p: p, n: n, h: h, w: w, stride: max(p.Stride, 1), dl: max(p.Dilation, 1)}
	span := r.dl*(p.Kernel-1) + 1
	r.ho = (h+2*p.Pad-span)/r.stride + 1
	r.wo = (w+2*p.Pad-span)/r.stride + 1
	return r
}

// tap maps a padded input coordinate to a pixel index, or -1 for a zero.
func (r refConv) tap(iy, ix int) (int, bool) {
	if r.p.Padding == ReflectPad {
		if iy < 0 {
			iy = -iy
		}
		if iy >= r.h {
			iy = 2*(r.h-1) - iy
		}
		if ix < 0 {
			ix = -ix
		}
		if ix >= r.w {
			ix = 2*(r.w-1) - ix
		}
	}
	if iy < 0 || iy >= r.h || ix < 0 || ix >= r.w {
		return 0, false
	}
	return iy*r.w + ix, true
}

// visit calls f(yIndex, xIndex, wIndex) for every product of the
// convolution.
func (r refConv) visit(f func(yi, xi, wi int)) {
	p := r.p
	k := p.Kernel
	for n := range r.n {
		for o := range p.OutC {
			for oy := range r.ho {
				for ox := range r.wo {
					yi := ((n*p.OutC+o)*r.ho+oy)*r.wo + ox
					for c := range p.InC {
						for ky := range k {
							for kx := range k {
								t, ok := r.tap(oy*r.stride+ky*r.dl-p.Pad, ox*r.stride+kx*r.dl-p.Pad)
								if !ok {
									continue
								}
								f(yi, (n*p.InC+c)*r.h*r.w+t, ((o*p.InC+c)*k+ky)*k+kx)
							}
						}
					}
				}
			}
		}
	}
}

func (r refConv) forward(x, w, b []float32) []float64 {
	y := make([]float64, r.n*r.p.OutC*r.ho*r.wo)
	r.visit(func(yi, xi, wi int) { y[yi] += float64(x[xi]) * float64(w[wi]) })
	if b != nil {
		for i := range y {
			y[i] += float64(b[(i/(r.ho*r.wo))%r.p.OutC])
		}
	}
	return y
}

func (r refConv) backward(x, w, dy []float32) (dx, dw, db []float64) {
	dx = make([]float64, len(x))
	dw = make([]float64, len(w))
	db = make([]float64, r.p.OutC)
	r.visit(func(yi, xi, wi int) {
		dx[xi] += float64(dy[yi]) * float64(w[wi])
		dw[wi] += float64(dy[yi]) * float64(x[xi])
	})
	for i, v := range dy {
		db[(i/(r.ho*r.wo))%r.p.OutC] += float64(v)
	}
	return dx, dw, db
}

// compare reports the first element where got and want differ by more
// than tol·(1 + |want|).
func compare[T float32 | float64](t *testing.T, what string, got []float32, want []T, tol float64) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("%s: %d values, want %d", what, len(got), len(want))
	}
	for i := range got {
		g, w := float64(got[i]), float64(want[i])
		if math.Abs(g-w) > tol*(1+math.Abs(w)) || math.IsNaN(g) {
			t.Fatalf("%s[%d] = %v, want %v (tol %g)", what, i, g, w, tol)
		}
	}
}

type convCase struct {
	Name, File, Padding           string
	N, InC, H, W, OutC            int
	Kernel, Stride, Dilation, Pad int
	OutH, OutW                    int
}

func (cc convCase) params() ConvParams {
	p := ConvParams{InC: cc.InC, OutC: cc.OutC, Kernel: cc.Kernel, Stride: cc.Stride, Dilation: cc.Dilation, Pad: cc.Pad}
	if cc.Padding == "reflect" {
		p.Padding = ReflectPad
	}
	return p
}

func loadConvCases(t *testing.T) (string, []convCase) {
	dir := filepath.Join("..", "..", "..", "testdata", "cpu", "conv")
	raw, err := os.ReadFile(filepath.Join(dir, "cases.json"))
	if err != nil {
		t.Fatal(err)
	}
	var idx struct {
		Source string
		Cases  []convCase
	}
	if err := json.Unmarshal(raw, &idx); err != nil {
		t.Fatal(err)
	}
	return dir, idx.Cases
}

func readF32(t *testing.T, path string) []float32 {
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	v := make([]float32, len(raw)/4)
	for i := range v {
		v[i] = math.Float32frombits(binary.LittleEndian.Uint32(raw[4*i:]))
	}
	return v
}

// TestConvAgainstTorch compares forward and all three gradients with
// fixtures from Debian python3-torch 1.13.1 (torch reports 1.13.0a0),
// torch.nn.functional.conv2d and torch.autograd.grad computed in float64;
// see testdata/cpu/conv/gen.py.
func TestConvAgainstTorch(t *testing.T) {
	dir, cases := loadConvCases(t)
	if len(cases) < 10 {
		t.Fatalf("only %d fixture cases", len(cases))
	}
	forEachPath(t, func(t *testing.T) {
		for _, cc := range cases {
			t.Run(cc.Name, func(t *testing.T) {
				c, err := NewConv2D(cc.params(), cc.N, cc.H, cc.W)
				if err != nil {
					t.Fatal(err)
				}
				n, oc, ho, wo := c.OutShape()
				if n != cc.N || oc != cc.OutC || ho != cc.OutH || wo != cc.OutW {
					t.Fatalf("OutShape = (%d,%d,%d,%d), torch gives (%d,%d,%d,%d)", n, oc, ho, wo, cc.N, cc.OutC, cc.OutH, cc.OutW)
				}
				all := readF32(t, filepath.Join(dir, cc.File))
				sizes := []int{cc.N * cc.InC * cc.H * cc.W, c.WeightLen(), cc.OutC, cc.N * cc.OutC * ho * wo}
				sizes = append(sizes, sizes[3], sizes[0], sizes[1], sizes[2])
				parts := make([][]float32, len(sizes))
				for i, s := range sizes {
					if len(all) < s {
						t.Fatalf("fixture %s is truncated", cc.File)
					}
					parts[i], all = all[:s], all[s:]
				}
				x, w, b, dy, wantY, wantDx, wantDw, wantDb := parts[0], parts[1], parts[2], parts[3], parts[4], parts[5], parts[6], parts[7]
				y := make([]float32, len(wantY))
				c.Forward(y, x, w, b)
				// Tolerances: float32 sums of up to InC·Kernel² (forward, dx) or
				// N·Ho·Wo (dw, db) products against float64 torch; the bound
				// grows with the sum length (common practice).
				kd := float64(c.kdim)
				compare(t, "y", y, wantY, 2e-7*kd+1e-6)
				dx := make([]float32, len(wantDx))
				dw := make([]float32, len(wantDw))
				db := make([]float32, len(wantDb))
				for i := range dx {
					dx[i] = float32(math.NaN()) // must be overwritten
				}
				c.Backward(dx, dw, db, x, w, dy)
				px := float64(cc.N * ho * wo)
				compare(t, "dx", dx, wantDx, 2e-7*float64(cc.OutC*cc.Kernel*cc.Kernel)+1e-6)
				compare(t, "dweight", dw, wantDw, 2e-7*px+1e-6)
				compare(t, "dbias", db, wantDb, 2e-7*px+1e-6)
			})
		}
	})
}

// TestConvAgainstReference compares with the direct loops of refConv over
// random layers, including ones larger than a packing block.
func TestConvAgainstReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	type tc struct {
		p       ConvParams
		n, h, w int
	}
	cases := []tc{
		{ConvParams{InC: 3, OutC: 32, Kernel: 3, Pad: 1, Padding: ReflectPad}, 1, 17, 61},
		{ConvParams{InC: 40, OutC: 13, Kernel: 3, Stride: 2, Pad: 1}, 2, 15, 19},
		{ConvParams{InC: 7, OutC: 70, Kernel: 1}, 3, 9, 70},
		{ConvParams{InC: 9, OutC: 5, Kernel: 3, Dilation: 3, Pad: 3, Padding: ReflectPad}, 1, 8, 9},
		{ConvParams{InC: 2, OutC: 3, Kernel: 5, Stride: 3, Pad: 2}, 2, 11, 12},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3}, 1, 3, 3},
		// Rows wider than a 48-wide tile, and output channels that do not
		// fill the last register block.
		{ConvParams{InC: 5, OutC: 13, Kernel: 3, Pad: 1}, 2, 9, 100},
		{ConvParams{InC: 4, OutC: 11, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad}, 1, 10, 203},
		// Degenerate images.
		{ConvParams{InC: 2, OutC: 3, Kernel: 3, Pad: 1}, 2, 1, 1},
		{ConvParams{InC: 2, OutC: 3, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad}, 1, 2, 3},
		{ConvParams{InC: 3, OutC: 2, Kernel: 3, Stride: 4, Dilation: 2, Pad: 1}, 2, 5, 9},
	}
	forEachPath(t, func(t *testing.T) {
		for _, k := range cases {
			name := fmt.Sprintf("%+v/%dx%dx%d", k.p, k.n, k.h, k.w)
			c, err := NewConv2D(k.p, k.n, k.h, k.w)
			if err != nil {
				t.Fatal(err)
			}
			r := newRefConv(c.Params(), k.n, k.h, k.w)
			x := randSlice(rng, k.n*k.p.InC*k.h*k.w)
			w := randSlice(rng, c.WeightLen())
			b := randSlice(rng, k.p.OutC)
			n, oc, ho, wo := c.OutShape()
			if ho != r.ho || wo != r.wo {
				t.Fatalf("%s: out %dx%d, reference %dx%d", name, ho, wo, r.ho, r.wo)
			}
			y := make([]float32, n*oc*ho*wo)
			for _, bias := range [][]float32{b, nil} {
				c.Forward(y, x, w, bias)
				compare(t, name+" y", y, r.forward(x, w, bias), 1e-6*float64(c.kdim+8))
			}
			dy := randSlice(rng, len(y))
			dx := make([]float32, len(x))
			dw := make([]float32, len(w))
			db := make([]float32, oc)
			for range 2 { // twice: gradients are overwritten, not accumulated
				c.Backward(dx, dw, db, x, w, dy)
			}
			wdx, wdw, wdb := r.backward(x, w, dy)
			compare(t, name+" dx", dx, wdx, 1e-6*float64(oc*k.p.Kernel*k.p.Kernel+8))
			compare(t, name+" dw", dw, wdw, 1e-6*float64(n*ho*wo+8))
			compare(t, name+" db", db, wdb, 1e-6*float64(n*ho*wo+8))
		}
	})
}

// TestConvFiniteDifference checks the gradients of L = Σ dy·conv(x, w, b)
// against central differences (gonum v0.17.0 diff/fd) on small layers.
func TestConvFiniteDifference(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 5))
	for _, p := range []ConvParams{
		{InC: 2, OutC: 3, Kernel: 3, Pad: 1, Padding: ReflectPad},
		{InC: 3, OutC: 2, Kernel: 3, Stride: 2, Dilation: 2, Pad: 2},
		{InC: 2, OutC: 2, Kernel: 1, Stride: 2, Pad: 1, Padding: ReflectPad},
	} {
		n, h, w := 2, 6, 7
		c, err := NewConv2D(p, n, h, w)
		if err != nil {
			t.Fatal(err)
		}
		x := randSlice(rng, n*p.InC*h*w)
		wt := randSlice(rng, c.WeightLen())
		b := randSlice(rng, p.OutC)
		_, oc, ho, wo := c.OutShape()
		y := make([]float32, n*oc*ho*wo)
		dy := randSlice(rng, len(y))
		dx, dw, db := make([]float32, len(x)), make([]float32, len(wt)), make([]float32, len(b))
		c.Backward(dx, dw, db, x, wt, dy)

		// The loss in float64 via the float32 kernel would make the
		// differences noisy; use the reference forward, which is float64.
		r := newRefConv(c.Params(), n, h, w)
		loss := func(x, wt, b []float32) float64 {
			var s float64
			for i, v := range r.forward(x, wt, b) {
				s += v * float64(dy[i])
			}
			return s
		}
		// Also check the kernel's own forward against the reference.
		c.Forward(y, x, wt, b)
		compare(t, "forward", y, r.forward(x, wt, b), 1e-5)

		for _, g := range []struct {
			name string
			v    []float32
			grad []float32
		}{{"x", x, dx}, {"w", wt, dw}, {"b", b, db}} {
			f := func(v []float64) float64 {
				save := append([]float32(nil), g.v...)
				for i := range v {
					g.v[i] = float32(v[i])
				}
				l := loss(x, wt, b)
				copy(g.v, save)
				return l
			}
			v0 := make([]float64, len(g.v))
			for i, e := range g.v {
				v0[i] = float64(e)
			}
			want := fd.Gradient(nil, f, v0, &fd.Settings{Formula: fd.Central, Step: 1e-2})
			// The loss is linear in each argument, so central differences
			// are exact up to float32 rounding of the perturbed values.
			compare(t, fmt.Sprintf("%+v d%s", p, g.name), g.grad, want, 2e-4)
		}
	}
}

func TestConvNoAlloc(t *testing.T) {
	forEachKernel(t, func(t *testing.T) {
		for _, p := range []ConvParams{
			{InC: 8, OutC: 16, Kernel: 3, Pad: 1},
			{InC: 8, OutC: 16, Kernel: 1},
			{InC: 8, OutC: 16, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad},
		} {
			c, err := NewConv2D(p, 2, 16, 40)
			if err != nil {
				t.Fatal(err)
			}
			n, oc, ho, wo := c.OutShape()
			x := make([]float32, 2*8*16*40)
			w := make([]float32, c.WeightLen())
			b := make([]float32, oc)
			y := make([]float32, n*oc*ho*wo)
			dx, dw := make([]float32, len(x)), make([]float32, len(w))
			step := func() {
				c.Forward(y, x, w, b)
				c.Backward(dx, dw, b, x, w, y)
			}
			step()
			if a := testing.AllocsPerRun(10, step); a != 0 {
				t.Fatalf("%+v: Forward+Backward allocated %v times per call, want 0", p, a)
			}
		}
	})
}

func TestNewConv2DErrors(t *testing.T) {
	for _, tc := range []struct {
		p       ConvParams
		n, h, w int
	}{
		{ConvParams{InC: 0, OutC: 1, Kernel: 3}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 0}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3, Stride: -1}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3}, 0, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3, Pad: 4, Padding: ReflectPad}, 1, 4, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3, Dilation: 5}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3, Padding: 9}, 1, 8, 8},
		{ConvParams{InC: 1 << 20, OutC: 1 << 12, Kernel: 3}, 1, 8, 8},
		// Sizes whose products wrap around to small positive numbers in a
		// 32-bit int (65537² = 2^32 + 2^17 + 1) or whose sums do.
		{ConvParams{InC: 1, OutC: 1, Kernel: 1}, 1, 65537, 65537},
		{ConvParams{InC: 65537, OutC: 1, Kernel: 1}, 65537, 1, 1},
		{ConvParams{InC: 1, OutC: 1, Kernel: 1, Pad: math.MaxInt / 2}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 3, Dilation: math.MaxInt / 2}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 1, Stride: math.MaxInt / 2}, 1, 8, 8},
		{ConvParams{InC: 1, OutC: 1, Kernel: 1, Stride: 1 << 16}, 1, 1 << 15, 1 << 15},
	} {
		if _, err := NewConv2D(tc.p, tc.n, tc.h, tc.w); err == nil {
			t.Errorf("NewConv2D(%+v, %d, %d, %d) gave no error", tc.p, tc.n, tc.h, tc.w)
		} else if !strings.HasPrefix(err.Error(), "cpu: ") {
			t.Errorf("error %q does not start with the package name", err)
		}
	}
}

func TestConvPanicsOnShortSlice(t *testing.T) {
	c, err := NewConv2D(ConvParams{InC: 1, OutC: 1, Kernel: 3, Pad: 1}, 1, 4, 4)
	if err != nil {
		t.Fatal(err)
	}
	defer func() {
		if recover() == nil {
			t.Fatal("Forward with a short y did not panic")
		}
	}()
	c.Forward(make([]float32, 15), make([]float32, 16), make([]float32, 9), nil)
}

// TestConvGOMAXPROCS checks that Forward and Backward give the same bits
// for every number of threads and every run: a plan made under
// GOMAXPROCS 1, 2, 3 and 5, and the GOMAXPROCS=1 plan reused after the
// change, each run three times, must match the single-threaded result
// exactly in y, dx, dweight and dbias. The shapes reach the partial sums
// of the weight gradients (small layers: several partial sums; layers too
// large for them: column groups; im2col: output blocks) and, with 300 output
// channels, the two-pass reduction of the 1×1 input gradient.
func TestConvGOMAXPROCS(t *testing.T) {
	type tc struct {
		p         ConvParams
		n, h, w   int
		grid, i2c bool // run on the padded-grid path, on the im2col path
	}
	cases := []tc{
		{ConvParams{InC: 3, OutC: 8, Kernel: 3, Pad: 1, Padding: ReflectPad}, 2, 19, 77, true, true},
		{ConvParams{InC: 6, OutC: 10, Kernel: 3, Stride: 2, Pad: 1}, 3, 13, 29, true, true},
		{ConvParams{InC: 20, OutC: 24, Kernel: 3, Pad: 2, Dilation: 2}, 1, 24, 40, true, false},
		{ConvParams{InC: 60, OutC: 140, Kernel: 3, Pad: 1}, 1, 6, 9, false, true},
		{ConvParams{InC: 9, OutC: 300, Kernel: 1}, 2, 5, 70, true, false},
		{ConvParams{InC: 256, OutC: 128, Kernel: 3, Pad: 1}, 2, 4, 6, true, false},
	}
	forEachPath(t, func(t *testing.T) {
		rng := rand.New(rand.NewPCG(9, 9))
		for _, c := range cases {
			if im2colOnly && !c.i2c || !im2colOnly && !c.grid {
				continue
			}
			p := c.p
			old := runtime.GOMAXPROCS(1)
			plan1, err := NewConv2D(p, c.n, c.h, c.w)
			if err != nil {
				runtime.GOMAXPROCS(old)
				t.Fatal(err)
			}
			x := randSlice(rng, c.n*p.InC*c.h*c.w)
			w := randSlice(rng, plan1.WeightLen())
			b := randSlice(rng, p.OutC)
			n, oc, ho, wo := plan1.OutShape()
			dy := randSlice(rng, n*oc*ho*wo)
			run := func(plan *Conv2D) [4][]float32 {
				r := [4][]float32{make([]float32, len(dy)), make([]float32, len(x)), make([]float32, len(w)), make([]float32, p.OutC)}
				plan.Forward(r[0], x, w, b)
				plan.Backward(r[1], r[2], r[3], x, w, dy)
				return r
			}
			want := run(plan1)
			for _, procs := range []int{2, 3, 5} {
				runtime.GOMAXPROCS(procs)
				plan, err := NewConv2D(p, c.n, c.h, c.w)
				if err != nil {
					t.Fatal(err)
				}
				for rep := range 3 {
					for which, pl := range []*Conv2D{plan, plan1} {
						got := run(pl)
						for i, what := range []string{"y", "dx", "dweight", "dbias"} {
							if k := firstDiff(got[i], want[i]); k >= 0 {
								t.Errorf("%+v n=%d GOMAXPROCS=%d plan %d run %d: %s[%d] = %x, single-threaded %x",
									p, c.n, procs, which, rep, what, k, math.Float32bits(got[i][k]), math.Float32bits(want[i][k]))
							}
						}
					}
				}
			}
			runtime.GOMAXPROCS(old)
		}
	})
}

// firstDiff returns the first index where a and b differ in their bits,
// or -1.
func firstDiff(a, b []float32) int {
	for i := range a {
		if math.Float32bits(a[i]) != math.Float32bits(b[i]) {
			return i
		}
	}
	return -1
}

// TestConvNaN checks that NaN and Inf inputs propagate without a panic.
func TestConvNaN(t *testing.T) {
	for _, p := range []ConvParams{
		{InC: 2, OutC: 3, Kernel: 3, Pad: 1},
		{InC: 2, OutC: 3, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad},
	} {
		c, err := NewConv2D(p, 1, 6, 6)
		if err != nil {
			t.Fatal(err)
		}
		x := make([]float32, 2*36)
		x[0] = float32(math.NaN())
		x[40] = float32(math.Inf(1))
		w := make([]float32, c.WeightLen())
		for i := range w {
			w[i] = 1
		}
		n, oc, ho, wo := c.OutShape()
		y := make([]float32, n*oc*ho*wo)
		c.Forward(y, x, w, nil)
		if !math.IsNaN(float64(y[0])) {
			t.Errorf("%+v: y[0] = %v, want NaN from x[0]", p, y[0])
		}
		dx, dw := make([]float32, len(x)), make([]float32, len(w))
		c.Backward(dx, dw, nil, x, w, y)
		if !math.IsNaN(float64(dw[4])) {
			t.Errorf("%+v: dw centre tap = %v, want NaN", p, dw[4])
		}
	}
}

// TestForwardOnlySize checks ForwardOnlySize against the buffers of built
// ForwardOnly plans: the network's 3×3 shapes (strides 1 and 2, a dilated
// one, reflection padding) and a 1×1 layer on the im2col path.
func TestForwardOnlySize(t *testing.T) {
	for _, c := range []struct {
		p       ConvParams
		n, h, w int
	}{
		{ConvParams{InC: 3, OutC: 32, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad}, 1, 128, 256},
		{ConvParams{InC: 96, OutC: 64, Kernel: 3, Pad: 1, Padding: ReflectPad}, 2, 32, 64},
		{ConvParams{InC: 16, OutC: 24, Kernel: 3, Dilation: 2, Pad: 2}, 1, 20, 36},
		{ConvParams{InC: 40, OutC: 8, Kernel: 1}, 3, 9, 14},
	} {
		c.p.ForwardOnly = true
		conv, err := NewConv2D(c.p, c.n, c.h, c.w)
		if err != nil {
			t.Fatal(err)
		}
		xpad, wpack, own := ForwardOnlySize(c.p, c.n, c.h, c.w)
		gx, gw := conv.ForwardScratch()
		var got int64
		for _, wk := range conv.workers {
			got += 4 * int64(cap(wk.dcol)+cap(wk.cbuf))
			if wk.ws != nil {
				got += 4 * int64(cap(wk.ws.apack)+cap(wk.ws.bpack)+cap(wk.ws.tile))
			}
		}
		if conv.fd != nil {
			got += 8 * int64(cap(conv.fd.offs))
		}
		if xpad != gx || wpack != gw || own != got {
			t.Errorf("%+v on %dx%dx%d: ForwardOnlySize gives (%d, %d, %d), the plan holds (%d, %d, %d)", c.p, c.n, c.h, c.w, xpad, wpack, own, gx, gw, got)
		}
	}
}

// TestTrainingPlanNoGEMMWorkspace: a padded-grid plan with gradients (3×3,
// strides 1 and 2) holds no GEMM workspace, which only the im2col path
// uses; an im2col plan (1×1) holds one per goroutine. The training graph
// has a plan per convolution, so a workspace each was 33 MB of the
// adapter's heap at 320×256.
func TestTrainingPlanNoGEMMWorkspace(t *testing.T) {
	for _, c := range []struct {
		p      ConvParams
		wantWS bool
	}{{ConvParams{InC: 8, OutC: 16, Kernel: 3, Pad: 1}, false}, {ConvParams{InC: 8, OutC: 16, Kernel: 3, Stride: 2, Pad: 1}, false}, {ConvParams{InC: 8, OutC: 16, Kernel: 1}, true}} {
		conv, err := NewConv2D(c.p, 1, 32, 48)
		if err != nil {
			t.Fatal(err)
		}
		conv.refresh()
		if len(conv.workers) == 0 {
			t.Fatalf("%+v: no workers after refresh: nothing to check", c.p)
		}
		for _, wk := range conv.workers {
			if (wk.ws != nil) != c.wantWS {
				t.Errorf("%+v: worker holds a GEMM workspace: %v, want %v", c.p, wk.ws != nil, c.wantWS)
			}
		}
	}
}

// TestConvSharedScratch: a plan on buffers that another plan left full of
// NaN (ShareForwardScratch) gives the bits of a plan with buffers of its own,
// forward and backward, at stride 1 (where only the slack past the padded
// planes is cleared) and stride 2 (odd sizes, so phase planes have rows
// past the padded input).
func TestConvSharedScratch(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 9))
	nan := float32(math.NaN())
	for _, p := range []ConvParams{
		{InC: 3, OutC: 5, Kernel: 3, Pad: 1},
		{InC: 2, OutC: 4, Kernel: 3, Pad: 1, Padding: ReflectPad},
		{InC: 4, OutC: 3, Kernel: 3, Dilation: 2, Pad: 2},
		{InC: 3, OutC: 17, Kernel: 1},
		{InC: 3, OutC: 6, Kernel: 3, Stride: 2, Pad: 1},
		{InC: 2, OutC: 3, Kernel: 3, Stride: 2, Pad: 1, Padding: ReflectPad},
	} {
		const n, h, w = 2, 9, 11
		own, err := NewConv2D(p, n, h, w)
		if err != nil {
			t.Fatal(err)
		}
		shared, err := NewConv2D(p, n, h, w)
		if err != nil {
			t.Fatal(err)
		}
		nx, nw := shared.ForwardScratch()
		if nx == 0 {
			continue // not on the padded-grid path: nothing to share
		}
		xpad, wpack := make([]float32, nx+13), make([]float32, nw+5)
		poison := func() {
			for i := range xpad {
				xpad[i] = nan
			}
			for i := range wpack {
				wpack[i] = nan
			}
		}
		shared.ShareForwardScratch(xpad, wpack)
		x := randSlice(rng, n*p.InC*h*w)
		wt := randSlice(rng, own.WeightLen())
		b := randSlice(rng, p.OutC)
		_, oc, ho, wo := own.OutShape()
		y0, y1 := make([]float32, n*oc*ho*wo), make([]float32, n*oc*ho*wo)
		own.Forward(y0, x, wt, b)
		poison()
		shared.Forward(y1, x, wt, b)
		for i := range y0 {
			if math.Float32bits(y0[i]) != math.Float32bits(y1[i]) {
				t.Fatalf("%+v: forward value %d: %v on shared buffers, %v on its own", p, i, y1[i], y0[i])
			}
		}
		dy := randSlice(rng, len(y0))
		dw0, dw1 := make([]float32, len(wt)), make([]float32, len(wt))
		dx0, dx1 := make([]float32, len(x)), make([]float32, len(x))
		db0, db1 := make([]float32, len(b)), make([]float32, len(b))
		own.Backward(dx0, dw0, db0, x, wt, dy)
		poison()
		shared.Backward(dx1, dw1, db1, x, wt, dy)
		for i := range dw0 {
			if math.Float32bits(dw0[i]) != math.Float32bits(dw1[i]) {
				t.Fatalf("%+v: weight gradient %d: %v on shared buffers, %v on its own", p, i, dw1[i], dw0[i])
			}
		}
		for i := range dx0 {
			if math.Float32bits(dx0[i]) != math.Float32bits(dx1[i]) {
				t.Fatalf("%+v: input gradient %d: %v on shared buffers, %v on its own", p, i, dx1[i], dx0[i])
			}
		}
	}
}
