package cpu

import (
	"math/rand/v2"
	"os"
	"testing"
)

// TestMicroKernels checks each micro-kernel against a plain loop on packed
// panels, with a row stride wider than the tile.
func TestMicroKernels(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	forEachKernel(t, func(t *testing.T) {
		mr, nr := kern.mr, kern.nr
		for _, k := range []int{0, 1, 7, 64} {
			a := randSlice(rng, k*mr)
			b := randSlice(rng, k*nr+3*nr)
			ldc := nr + 5
			for _, acc := range []bool{false, true} {
				c := randSlice(rng, mr*ldc)
				want := append([]float32(nil), c...)
				for i := range mr {
					for j := range nr {
						var s float64
						for p := range k {
							s += float64(a[p*mr+i]) * float64(b[p*nr+j])
						}
						if acc {
							s += float64(want[i*ldc+j])
						}
						want[i*ldc+j] = float32(s)
					}
				}
				kern.fn(k, a, b, c, ldc, acc)
				compare(t, "microKernel", c, want, 1e-5*float64(k+1))

				// The indirect kernel on rows of b picked by offsets.
				offs := make([]int, k)
				for p := range offs {
					offs[p] = rng.IntN(3*nr + 1)
				}
				c = randSlice(rng, mr*ldc)
				want = append([]float32(nil), c...)
				for i := range mr {
					for j := range nr {
						var s float64
						for p := range k {
							s += float64(a[p*mr+i]) * float64(b[offs[p]+j])
						}
						if acc {
							s += float64(want[i*ldc+j])
						}
						want[i*ldc+j] = float32(s)
					}
				}
				kern.ind(k, a, b, offs, c, ldc, acc)
				compare(t, "indirectKernel", c, want, 1e-5*float64(k+1))
			}
		}
		// The dot kernel.
		mo, mk := kern.mo, kern.mk
		for _, n := range []int{0, kern.lanes, 5 * kern.lanes} {
			ldy := n + 3
			y := randSlice(rng, mo*ldy)
			x := randSlice(rng, n+100)
			offs := make([]int, mk)
			for j := range offs {
				offs[j] = rng.IntN(101)
			}
			ldo := mk + 2
			out := randSlice(rng, mo*ldo)
			want := append([]float32(nil), out...)
			for i := range mo {
				for j := range mk {
					s := float64(want[i*ldo+j])
					for q := range n {
						s += float64(y[i*ldy+q]) * float64(x[offs[j]+q])
					}
					want[i*ldo+j] = float32(s)
				}
			}
			kern.dot(n, y, ldy, x, offs, out, ldo)
			compare(t, "dotKernel", out, want, 1e-5*float64(n+1))
		}
	})
}

// TestKernelSelection checks the micro-kernel chosen at start against
// PARALLAX_WANT_KERNEL when it is set: CI sets it for each build and CPU
// it runs (for example "generic" under -tags purego, or on amd64 with
// GODEBUG=cpu.avx2=off,cpu.avx512f=off,cpu.fma=off; "neon" on arm64).
func TestKernelSelection(t *testing.T) {
	want := os.Getenv("PARALLAX_WANT_KERNEL")
	if want == "" {
		t.Skipf("PARALLAX_WANT_KERNEL not set; the kernel in use is %q", KernelName())
	}
	if got := KernelName(); got != want {
		t.Errorf("KernelName() = %q, want %q", got, want)
	}
	simd := activationSIMD || upsampleSIMD
	if want == "generic" && simd {
		t.Errorf("the portable kernel is selected but the elementwise SIMD loops are on")
	}
}
