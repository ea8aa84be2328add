package cpu

import "runtime"

// ForwardOnlySize returns what a ForwardOnly plan of NewConv2D(p, n, h, w)
// holds once built, without building it: the lengths of its two forward
// workspaces, the padded input and the packed weights (ForwardScratch;
// plans that ShareForwardScratch hold one pair between them), and own, the
// bytes of its per-goroutine buffers (GOMAXPROCS of them). It assumes p and
// the sizes are valid for NewConv2D; it is for budgeting memory before
// anything is allocated.
func ForwardOnlySize(p ConvParams, n, h, w int) (xpad, wpack int, own int64) {
	s, d := max(p.Stride, 1), max(p.Dilation, 1)
	procs := int64(runtime.GOMAXPROCS(0))
	if (p.Kernel == 1 && s == 1 && p.Pad == 0) || im2colOnly {
		// The im2col path: one GEMM workspace per goroutine.
		mr, nr := kern.mr, kern.nr
		mc, nc := (blockM+mr-1)/mr*mr, (blockN+nr-1)/nr*nr
		return 0, 0, procs * 4 * int64(mc*blockK+nc*blockK+mr*nr)
	}
	hph, wph := (h+2*p.Pad+s-1)/s, (w+2*p.Pad+s-1)/s
	xpad = n*p.InC*s*s*hph*wph + 64 + (p.Kernel-1)*d + 16 // newDirect and direct.slack
	kdim := p.InC * p.Kernel * p.Kernel
	mpad := (p.OutC + kern.mr - 1) / kern.mr * kern.mr
	ncb := (256 + kern.nr - 1) / kern.nr * kern.nr // direct.size
	// The output block of each goroutine and the tap offsets.
	return xpad, mpad * kdim, procs*4*int64(mpad*ncb) + 8*int64(kdim)
}
