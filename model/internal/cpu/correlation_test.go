package cpu

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"testing"
)

// corrFixtureCase is one case of testdata/stereo/ops/correlation.json,
// written by gen_correlation.py beside it: the cost volume from its formula
// in PyTorch 1.13.1 (Debian python3-torch), float64 arithmetic on float32
// inputs, gradients by autograd.
type corrFixtureCase struct {
	Shape  []int     `json:"shape"`
	Disps  int       `json:"disps"`
	Left   []float32 `json:"left"`
	Right  []float32 `json:"right"`
	Y      []float32 `json:"y"`
	Gy     []float32 `json:"gy"`
	Gleft  []float32 `json:"gleft"`
	Gright []float32 `json:"gright"`
}

func loadCorrFixture(t *testing.T) []corrFixtureCase {
	t.Helper()
	path := filepath.Join("..", "..", "..", "testdata", "stereo", "ops", "correlation.json")
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("reading fixture: %v (regenerate with /usr/bin/python3 testdata/stereo/ops/gen_correlation.py)", err)
	}
	var f struct {
		Source string            `json:"source"`
		Cases  []corrFixtureCase `json:"cases"`
	}
	if err := json.Unmarshal(raw, &f); err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	if len(f.Cases) == 0 {
		t.Fatalf("%s has no cases", path)
	}
	return f.Cases
}

// corrPaths runs f with every row loop this CPU has.
func corrPaths(t *testing.T, f func(t *testing.T)) {
	saved := corrAVX2
	defer func() { corrAVX2 = saved }()
	corrAVX2 = false
	t.Run("go", f)
	if saved {
		corrAVX2 = true
		t.Run("avx2", f)
	}
}

func TestCorrelationAgainstTorch(t *testing.T) { corrPaths(t, testCorrelationAgainstTorch) }

func testCorrelationAgainstTorch(t *testing.T) {
	for _, c := range loadCorrFixture(t) {
		n, ch, h, w := c.Shape[0], c.Shape[1], c.Shape[2], c.Shape[3]
		name := fmt.Sprintf("%v disps %d", c.Shape, c.Disps)
		y := make([]float32, n*c.Disps*h*w)
		gl := make([]float32, n*ch*h*w)
		gr := make([]float32, n*ch*h*w)
		Correlation(y, c.Left, c.Right, n, ch, h, w, c.Disps)
		CorrelationBackward(gl, gr, c.Gy, c.Left, c.Right, n, ch, h, w, c.Disps)
		// Reference: PyTorch 1.13.1 (Debian python3-torch), the formula in
		// float64 and autograd (gen_correlation.py). The tolerances cover
		// float32 sums of up to 24 products of unit-normal values.
		opsClose(t, name+" forward", y, c.Y, 1e-6, 1e-5)
		opsClose(t, name+" dleft", gl, c.Gleft, 1e-5, 1e-5)
		opsClose(t, name+" dright", gr, c.Gright, 1e-5, 1e-5)
	}
}

// TestCorrelationHandCase checks a volume worked out by hand from the
// formula: c = 2, w = 3, two shifts.
func TestCorrelationHandCase(t *testing.T) { corrPaths(t, testCorrelationHandCase) }

func testCorrelationHandCase(t *testing.T) {
	left := []float32{1, 2, 3, 1, 1, 1}
	right := []float32{4, 5, 6, 2, 2, 2}
	y := make([]float32, 2*3)
	Correlation(y, left, right, 1, 2, 1, 3, 2)
	// k = 0: ((1·4+1·2), (2·5+1·2), (3·6+1·2)) / 2; k = 1: (0, (2·4+2)/2, (3·5+2)/2).
	want := []float32{3, 6, 10, 0, 5, 8.5}
	opsClose(t, "forward", y, want, 0, 0)
	// With ddst 1 at (k = 1, x = 2) only: dleft(ch, 2) = right(ch, 1)/2 and
	// dright(ch, 1) = left(ch, 2)/2.
	g := []float32{0, 0, 0, 0, 0, 1}
	gl, gr := make([]float32, 6), make([]float32, 6)
	CorrelationBackward(gl, gr, g, left, right, 1, 2, 1, 3, 2)
	opsClose(t, "dleft", gl, []float32{0, 0, 2.5, 0, 0, 1}, 0, 0)
	opsClose(t, "dright", gr, []float32{0, 1.5, 0, 0, 0.5, 0}, 0, 0)
}

// TestCorrelationShiftPeak builds a right view that is the left view
// shifted by s pixels (right(x−s) = left(x)) with unit-length feature
// vectors, so by the Cauchy–Schwarz inequality channel s holds the largest
// value, 1/c, at every column x ≥ s.
func TestCorrelationShiftPeak(t *testing.T) { corrPaths(t, testCorrelationShiftPeak) }

func testCorrelationShiftPeak(t *testing.T) {
	const n, c, h, w, disps = 2, 16, 3, 45, 12
	for _, s := range []int{0, 1, 5, 11} {
		left := opsRandom(n*c*h*w, 1, uint64(10+s))
		right := opsRandom(n*c*h*w, 1, uint64(20+s))
		unitPixels(left, n, c, h*w)
		unitPixels(right, n, c, h*w)
		for b := 0; b < n; b++ {
			for ch := 0; ch < c; ch++ {
				for y := 0; y < h; y++ {
					row := ((b*c+ch)*h + y) * w
					copy(right[row:row+w-s], left[row+s:row+w])
				}
			}
		}
		vol := make([]float32, n*disps*h*w)
		Correlation(vol, left, right, n, c, h, w, disps)
		for b := 0; b < n; b++ {
			for y := 0; y < h; y++ {
				for x := s; x < w; x++ {
					best := 0
					at := func(k int) float32 { return vol[((b*disps+k)*h+y)*w+x] }
					for k := 1; k < disps; k++ {
						if at(k) > at(best) {
							best = k
						}
					}
					if best != s || math.Abs(float64(at(s))-1.0/c) > 1e-6 {
						t.Fatalf("shift %d, item %d, (%d, %d): peak at channel %d (value %v), want channel %d with 1/c = %v",
							s, b, y, x, best, at(best), s, 1.0/c)
					}
				}
			}
		}
	}
}

// unitPixels scales every pixel's vector of c channels to length 1.
func unitPixels(x []float32, n, c, plane int) {
	for b := 0; b < n; b++ {
		for p := 0; p < plane; p++ {
			var ss float64
			for ch := 0; ch < c; ch++ {
				v := float64(x[(b*c+ch)*plane+p])
				ss += v * v
			}
			for ch := 0; ch < c; ch++ {
				i := (b*c+ch)*plane + p
				x[i] = float32(float64(x[i]) / math.Sqrt(ss))
			}
		}
	}
}

// naiveCorrelation is the formula in float64.
func naiveCorrelation(left, right []float32, n, c, h, w, disps int) []float32 {
	y := make([]float32, n*disps*h*w)
	for b := 0; b < n; b++ {
		for k := 0; k < disps; k++ {
			for yy := 0; yy < h; yy++ {
				for x := k; x < w; x++ {
					var s float64
					for ch := 0; ch < c; ch++ {
						i := ((b*c+ch)*h + yy) * w
						s += float64(left[i+x]) * float64(right[i+x-k])
					}
					y[((b*disps+k)*h+yy)*w+x] = float32(s / float64(c))
				}
			}
		}
	}
	return y
}

// naiveCorrelationBackward scatters every upstream value onto the two
// pixels of each product, in float64.
func naiveCorrelationBackward(g, left, right []float32, n, c, h, w, disps int) (gl, gr []float32) {
	al, ar := make([]float64, len(left)), make([]float64, len(right))
	for b := 0; b < n; b++ {
		for k := 0; k < disps; k++ {
			for yy := 0; yy < h; yy++ {
				for x := k; x < w; x++ {
					gv := float64(g[((b*disps+k)*h+yy)*w+x]) / float64(c)
					for ch := 0; ch < c; ch++ {
						i := ((b*c+ch)*h + yy) * w
						al[i+x] += gv * float64(right[i+x-k])
						ar[i+x-k] += gv * float64(left[i+x])
					}
				}
			}
		}
	}
	gl, gr = make([]float32, len(al)), make([]float32, len(ar))
	for i := range al {
		gl[i], gr[i] = float32(al[i]), float32(ar[i])
	}
	return gl, gr
}

// TestCorrelationLarge compares shapes that are split over several ranges,
// and widths around the 8-lane blocks, with the formula in float64.
func TestCorrelationLarge(t *testing.T) { corrPaths(t, testCorrelationLarge) }

func testCorrelationLarge(t *testing.T) {
	shapes := []struct{ n, c, h, w, disps int }{{2, 9, 13, 70, 30}, {1, 32, 4, 64, 24}, {1, 17, 3, 41, 13}, {1, 9, 2, 5, 3}, {1, 3, 2, 100, 130}}
	for w := 1; w <= 27; w++ {
		shapes = append(shapes, struct{ n, c, h, w, disps int }{1, 3, 2, w, 1 + w%11})
	}
	for _, s := range shapes {
		left := opsRandom(s.n*s.c*s.h*s.w, 1, 31)
		right := opsRandom(len(left), 1, 32)
		g := opsRandom(s.n*s.disps*s.h*s.w, 1, 33)
		y := make([]float32, len(g))
		gl, gr := make([]float32, len(left)), make([]float32, len(left))
		Correlation(y, left, right, s.n, s.c, s.h, s.w, s.disps)
		CorrelationBackward(gl, gr, g, left, right, s.n, s.c, s.h, s.w, s.disps)
		wl, wr := naiveCorrelationBackward(g, left, right, s.n, s.c, s.h, s.w, s.disps)
		name := fmt.Sprintf("%+v", s)
		// Reference: the formula, evaluated in float64.
		opsClose(t, name+" forward", y, naiveCorrelation(left, right, s.n, s.c, s.h, s.w, s.disps), 1e-6, 1e-5)
		opsClose(t, name+" dleft", gl, wl, 2e-5, 1e-5)
		opsClose(t, name+" dright", gr, wr, 2e-5, 1e-5)
		// One gradient alone is the same bits as both together.
		one := make([]float32, len(left))
		CorrelationBackward(one, nil, g, left, right, s.n, s.c, s.h, s.w, s.disps)
		opsClose(t, name+" dleft alone", one, gl, 0, 0)
		CorrelationBackward(nil, one, g, left, nil, s.n, s.c, s.h, s.w, s.disps)
		opsClose(t, name+" dright alone", one, gr, 0, 0)
	}
}

func TestCorrelationFiniteDifferences(t *testing.T) { corrPaths(t, testCorrelationFiniteDifferences) }

func testCorrelationFiniteDifferences(t *testing.T) {
	for _, s := range []struct{ n, c, h, w, disps int }{{1, 1, 1, 1, 1}, {1, 3, 2, 5, 4}, {2, 2, 1, 11, 9}, {1, 2, 2, 4, 6}} {
		left := opsRandom(s.n*s.c*s.h*s.w, 1, 41)
		right := opsRandom(len(left), 1, 42)
		gy := opsRandom(s.n*s.disps*s.h*s.w, 1, 43)
		gl, gr := make([]float32, len(left)), make([]float32, len(left))
		CorrelationBackward(gl, gr, gy, left, right, s.n, s.c, s.h, s.w, s.disps)
		name := fmt.Sprintf("%+v", s)
		opsCheckGradient(t, name+" dleft", left, gy, gl, func(y, x []float32) {
			Correlation(y, x, right, s.n, s.c, s.h, s.w, s.disps)
		}, len(gy), 1e-2, 1e-4)
		opsCheckGradient(t, name+" dright", right, gy, gr, func(y, x []float32) {
			Correlation(y, left, x, s.n, s.c, s.h, s.w, s.disps)
		}, len(gy), 1e-2, 1e-4)
	}
}

// TestCorrelationGOMAXPROCS checks that the results are the same bits on
// any number of threads, for shapes split into several ranges of rows.
func TestCorrelationGOMAXPROCS(t *testing.T) { corrPaths(t, testCorrelationGOMAXPROCS) }

func testCorrelationGOMAXPROCS(t *testing.T) {
	const n, c, h, w, disps = 2, 16, 24, 64, 24
	left := opsRandom(n*c*h*w, 1, 51)
	right := opsRandom(len(left), 1, 52)
	g := opsRandom(n*disps*h*w, 1, 53)
	run := func() (y, gl, gr []float32) {
		y = make([]float32, len(g))
		gl, gr = make([]float32, len(left)), make([]float32, len(left))
		Correlation(y, left, right, n, c, h, w, disps)
		CorrelationBackward(gl, gr, g, left, right, n, c, h, w, disps)
		return y, gl, gr
	}
	old := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(old)
	y1, gl1, gr1 := run()
	for _, procs := range []int{2, 3, 5} {
		runtime.GOMAXPROCS(procs)
		for rep := range 3 {
			y, gl, gr := run()
			for _, d := range []struct {
				what      string
				got, want []float32
			}{{"dst", y, y1}, {"dleft", gl, gl1}, {"dright", gr, gr1}} {
				if i := firstDiff(d.got, d.want); i >= 0 {
					t.Errorf("GOMAXPROCS=%d run %d: %s[%d] differs from the single-threaded result", procs, rep, d.what, i)
				}
			}
		}
	}
}

func TestCorrelationNoAlloc(t *testing.T) {
	for _, s := range []struct{ n, c, h, w, disps int }{{1, 2, 3, 4, 2}, {4, 32, 32, 64, 24}} {
		left := make([]float32, s.n*s.c*s.h*s.w)
		right := make([]float32, len(left))
		gl, gr := make([]float32, len(left)), make([]float32, len(left))
		y := make([]float32, s.n*s.disps*s.h*s.w)
		name := fmt.Sprintf("%+v", s)
		opsNoAlloc(t, "Correlation "+name, func() { Correlation(y, left, right, s.n, s.c, s.h, s.w, s.disps) })
		opsNoAlloc(t, "CorrelationBackward "+name, func() {
			CorrelationBackward(gl, gr, y, left, right, s.n, s.c, s.h, s.w, s.disps)
		})
	}
	// The stereo network's levels one after the other: the padded-row
	// buffers of the largest serve the others.
	levels := []struct{ n, c, h, w, disps int }{{2, 64, 8, 16, 24}, {2, 32, 16, 32, 5}, {2, 16, 32, 64, 5}}
	type buffers struct{ left, right, y, gl, gr []float32 }
	bufs := make([]buffers, len(levels))
	for i, s := range levels {
		m := s.n * s.c * s.h * s.w
		bufs[i] = buffers{opsRandom(m, 1, 1), opsRandom(m, 1, 2), make([]float32, s.n*s.disps*s.h*s.w), make([]float32, m), make([]float32, m)}
	}
	opsNoAlloc(t, "Correlation and CorrelationBackward over three shapes", func() {
		for i, s := range levels {
			b := bufs[i]
			Correlation(b.y, b.left, b.right, s.n, s.c, s.h, s.w, s.disps)
			CorrelationBackward(b.gl, b.gr, b.y, b.left, b.right, s.n, s.c, s.h, s.w, s.disps)
		}
	})
}

func TestCorrelationNonFinite(t *testing.T) { corrPaths(t, testCorrelationNonFinite) }

func testCorrelationNonFinite(t *testing.T) {
	// IEEE arithmetic (common practice): a NaN reaches the outputs whose
	// products read it and no others; the constant zeros (x < k) stay 0.
	const w, disps = 20, 4
	left := opsRandom(w, 1, 61)
	right := opsRandom(w, 1, 62)
	left[1] = float32(math.NaN())
	y := make([]float32, disps*w)
	Correlation(y, left, right, 1, 1, 1, w, disps)
	for k := 0; k < disps; k++ {
		for x := 0; x < w; x++ {
			v := y[k*w+x]
			switch {
			case x < k && v != 0:
				t.Errorf("(k %d, x %d) = %v, want the constant 0", k, x, v)
			case x == 1 && x >= k && !math.IsNaN(float64(v)):
				t.Errorf("(k %d, x %d) = %v, want NaN", k, x, v)
			case x != 1 && math.IsNaN(float64(v)):
				t.Errorf("(k %d, x %d) is NaN", k, x)
			}
		}
	}
}

func TestCorrelationPanicsOnMisuse(t *testing.T) {
	x := make([]float32, 6)
	opsMustPanic(t, "short dst", func() { Correlation(make([]float32, 11), x, x, 1, 1, 2, 3, 2) })
	opsMustPanic(t, "long left", func() { Correlation(make([]float32, 12), make([]float32, 7), x, 1, 1, 2, 3, 2) })
	opsMustPanic(t, "zero disps", func() { Correlation(nil, x, x, 1, 1, 2, 3, 0) })
	opsMustPanic(t, "zero width", func() { Correlation(nil, nil, nil, 1, 1, 2, 0, 1) })
	opsMustPanic(t, "short ddst", func() { CorrelationBackward(x, x, make([]float32, 11), x, x, 1, 1, 2, 3, 2) })
	opsMustPanic(t, "dleft without right", func() { CorrelationBackward(x, nil, make([]float32, 12), x, nil, 1, 1, 2, 3, 2) })
	opsMustPanic(t, "short dright", func() { CorrelationBackward(nil, x[:5], make([]float32, 12), x, x, 1, 1, 2, 3, 2) })
}

// corrBenchShapes are the stereo network's cost volumes (parallax-stereo
// v1: 64, 32 and 16 feature channels at ⅛, ¼ and ½ resolution, 24 shifts
// at ⅛ and 5 around the estimate at the finer levels, a batch of both view
// orders), in training (4 pairs at 256×128) and in inference (one pair at
// 640×480).
var corrBenchShapes = []struct{ n, c, h, w, disps int }{
	{8, 64, 16, 32, 24},
	{8, 32, 32, 64, 5},
	{8, 16, 64, 128, 5},
	{2, 64, 60, 80, 24},
	{2, 32, 120, 160, 5},
	{2, 16, 240, 320, 5},
}

func benchmarkCorrelation(b *testing.B, n, c, h, w, disps int, backward bool) {
	left := opsRandom(n*c*h*w, 1, 71)
	right := opsRandom(len(left), 1, 72)
	g := opsRandom(n*disps*h*w, 1, 73)
	y := make([]float32, len(g))
	gl, gr := make([]float32, len(left)), make([]float32, len(left))
	b.ReportAllocs()
	start := processCPUSeconds()
	for b.Loop() {
		if backward {
			CorrelationBackward(gl, gr, g, left, right, n, c, h, w, disps)
		} else {
			Correlation(y, left, right, n, c, h, w, disps)
		}
	}
	macs := float64(n * c * h * w * min(disps, w))
	if backward {
		macs *= 2
	}
	b.ReportMetric(macs*float64(b.N)/b.Elapsed().Seconds()/1e9, "GMAC/s")
	b.ReportMetric((processCPUSeconds()-start)*1e9/float64(b.N), "cpu-ns/op")
}

func BenchmarkCorrelation(b *testing.B) {
	for _, s := range corrBenchShapes {
		for _, backward := range []bool{false, true} {
			name := "Forward"
			if backward {
				name = "Backward"
			}
			b.Run(fmt.Sprintf("%s/%dx%dx%dx%dx%d", name, s.n, s.c, s.h, s.w, s.disps), func(b *testing.B) {
				benchmarkCorrelation(b, s.n, s.c, s.h, s.w, s.disps, backward)
			})
		}
	}
}
