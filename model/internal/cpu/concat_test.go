package cpu

import (
	"fmt"
	"testing"
)

func TestConcatAgainstTorch(t *testing.T) {
	for _, c := range loadOpsFixture(t, "concat.json") {
		n, total, h, w := c.nchw()
		name := fmt.Sprintf("cat %v %v", c.Shape, c.Chans)
		y := make([]float32, n*total*h*w)
		Concat(y, c.Xs, c.Chans, n, h, w)
		gxs := make([][]float32, len(c.Xs))
		for i := range gxs {
			gxs[i] = make([]float32, len(c.Xs[i]))
		}
		ConcatBackward(gxs, c.Gy, c.Chans, n, h, w)
		// Reference: PyTorch 1.13.1 (Debian python3-torch) torch.cat(dim=1) and
		// autograd. Copies: exact.
		opsClose(t, name+" forward", y, c.Y, 0, 0)
		for i := range gxs {
			opsClose(t, fmt.Sprintf("%s gradient of input %d", name, i), gxs[i], c.Gxs[i], 0, 0)
		}
	}
}

func TestConcatLargeAndNilGradient(t *testing.T) {
	n, h, w := 2, 64, 96
	chans := []int{16, 3, 21}
	total := 40
	xs := make([][]float32, len(chans))
	for i, c := range chans {
		xs[i] = opsRandom(n*c*h*w, 1, uint64(40+i))
	}
	y := make([]float32, n*total*h*w)
	Concat(y, xs, chans, n, h, w)
	off := 0
	for i, c := range chans {
		for item := 0; item < n; item++ {
			for k := 0; k < c*h*w; k++ {
				// Channel order of a concatenation (definition): input i's channels
				// follow those of inputs 0 … i−1.
				if got, want := y[(item*total+off)*h*w+k], xs[i][item*c*h*w+k]; got != want {
					t.Fatalf("input %d item %d value %d: %v, want %v", i, item, k, got, want)
				}
			}
		}
		off += c
	}
	g1 := make([]float32, len(xs[1]))
	ConcatBackward([][]float32{nil, g1, nil}, y, chans, n, h, w)
	opsClose(t, "split of input 1", g1, xs[1], 0, 0)
}

func TestConcatNoAlloc(t *testing.T) {
	n, h, w := 1, 64, 128
	a := make([]float32, n*32*h*w)
	b := make([]float32, n*16*h*w)
	y := make([]float32, len(a)+len(b))
	opsNoAlloc(t, "Concat", func() { Concat(y, [][]float32{a, b}, []int{32, 16}, n, h, w) })
	opsNoAlloc(t, "ConcatBackward", func() { ConcatBackward([][]float32{a, b}, y, []int{32, 16}, n, h, w) })
	small := make([]float32, 6)
	opsNoAlloc(t, "Concat small", func() { Concat(small, [][]float32{small[:3], small[3:]}, []int{1, 1}, 1, 1, 3) })
}

func TestConcatPanicsOnMisuse(t *testing.T) {
	a := make([]float32, 6)
	opsMustPanic(t, "count mismatch", func() { Concat(make([]float32, 12), [][]float32{a, a}, []int{1}, 1, 2, 3) })
	opsMustPanic(t, "short dst", func() { Concat(make([]float32, 11), [][]float32{a, a}, []int{1, 1}, 1, 2, 3) })
	opsMustPanic(t, "nil source", func() { Concat(make([]float32, 12), [][]float32{a, nil}, []int{1, 1}, 1, 2, 3) })
	opsMustPanic(t, "zero channels", func() { ConcatBackward([][]float32{a, nil}, make([]float32, 6), []int{1, 0}, 1, 2, 3) })
	opsMustPanic(t, "no inputs", func() { Concat(nil, nil, nil, 1, 2, 3) })
}

func BenchmarkConcat(b *testing.B) {
	for _, s := range opsBenchSizes {
		// The decoder's skip join: the upsampled path and an encoder feature
		// of the same width.
		hw := s.h * s.w
		a := make([]float32, s.c*hw)
		c := make([]float32, s.c*hw)
		y := make([]float32, 2*s.c*hw)
		srcs := [][]float32{a, c}
		chans := []int{s.c, s.c}
		b.Run(fmt.Sprintf("Forward/%dx%dx%d+%d", s.c, s.h, s.w, s.c), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				Concat(y, srcs, chans, 1, s.h, s.w)
			}
			opsReportGBs(b, 16*s.c*hw)
		})
		b.Run(fmt.Sprintf("Backward/%dx%dx%d+%d", s.c, s.h, s.w, s.c), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				ConcatBackward(srcs, y, chans, 1, s.h, s.w)
			}
			opsReportGBs(b, 16*s.c*hw)
		})
	}
}
