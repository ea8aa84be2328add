package cpu

import "github.com/parallaxdepth/parallax/internal/parallel"

// Backward computes the gradients of a loss with respect to the input,
// the weights and the bias, given x and weight as passed to Forward and
// dy, the gradient with respect to the output (shape (N, OutC, Ho, Wo)).
// dx (shape of x), dweight (OIHW) and dbias (OutC values) are overwritten;
// any of them may be nil to skip that gradient.
//
// Backward panics if a slice length disagrees with the plan's shapes, or
// on a ForwardOnly plan.
func (c *Conv2D) Backward(dx, dweight, dbias, x, weight, dy []float32) {
	if c.p.ForwardOnly {
		panic("cpu: Backward on a ForwardOnly Conv2D")
	}
	inLen, outLen := c.n*c.p.InC*c.g.h*c.g.w, c.n*c.p.OutC*c.pix
	c.check("Backward", dy, outLen, "dy")
	if dbias != nil {
		c.check("Backward", dbias, c.p.OutC, "dbias")
		c.biasGrad(dbias, dy)
	}
	if dweight == nil && dx == nil {
		return
	}
	c.refresh()
	if c.fd != nil {
		c.directBackward(dx, dweight, x, weight, dy)
		return
	}
	if dweight != nil {
		c.check("Backward", dweight, c.WeightLen(), "dweight")
		c.check("Backward", x, inLen, "x")
		c.weightGrad(dweight, x, dy)
	}
	if dx != nil {
		c.check("Backward", dx, inLen, "dx")
		c.check("Backward", weight, c.WeightLen(), "weight")
		c.inputGrad(dx, weight, dy)
	}
}

func (c *Conv2D) biasGrad(db, dy []float32) {
	c.runTasks(taskBiasGrad, c.p.OutC, dy, db)
}

// sum8 returns the sum of x with eight partial sums, so that the adds do
// not wait on one another.
func sum8(x []float32) float32 {
	var s0, s1, s2, s3, s4, s5, s6, s7 float32
	i := 0
	for ; i+8 <= len(x); i += 8 {
		v := x[i : i+8 : i+8]
		s0 += v[0]
		s1 += v[1]
		s2 += v[2]
		s3 += v[3]
		s4 += v[4]
		s5 += v[5]
		s6 += v[6]
		s7 += v[7]
	}
	for ; i < len(x); i++ {
		s0 += x[i]
	}
	return ((s0 + s1) + (s2 + s3)) + ((s4 + s5) + (s6 + s7))
}

// weightGrad computes dW = Σ_n dY_n · col(X_n)ᵀ. The sum runs over
// pieces of dwStripe pixels of one image, taken in image-major order and
// dealt into dwParts contiguous runs; each run is summed in order into its
// own partial sum, and the partial sums are added in order at the end. The
// output is also cut into blocks of blockM×blockN, so a unit of work is
// one (run, output block): units write disjoint values and the grouping of
// every sum depends on the shapes alone, not on GOMAXPROCS or on which
// goroutine ran which unit.
func (c *Conv2D) weightGrad(dw, x, dy []float32) {
	clear(c.dwPart)
	c.x, c.dy = x, dy
	parallel.ForN(c.maxProcs, c.dwParts*c.dwMG*c.dwNG, 1, c.dwFn)
	c.x, c.dy = nil, nil
	n := c.p.OutC * c.kdim
	copy(dw, c.dwPart[:n])
	for p := 1; p < c.dwParts; p++ {
		for i, v := range c.dwPart[p*n : (p+1)*n] {
			dw[i] += v
		}
	}
}

func (c *Conv2D) weightGradUnits(lo, hi int) {
	wk := <-c.free
	stripes := (c.pix + c.dwStripe - 1) / c.dwStripe
	inLen, outLen := c.p.InC*c.g.h*c.g.w, c.p.OutC*c.pix
	blocks := c.dwMG * c.dwNG
	op := &wk.op
	for u := lo; u < hi; u++ {
		part, blk := u/blocks, u%blocks
		m0, n0 := blk/c.dwNG*blockM, blk%c.dwNG*blockN
		m1, n1 := min(m0+blockM, c.p.OutC), min(n0+blockN, c.kdim)
		dst := c.dwPart[part*c.p.OutC*c.kdim : (part+1)*c.p.OutC*c.kdim]
		for pc := part * c.dwPieces / c.dwParts; pc < (part+1)*c.dwPieces/c.dwParts; pc++ {
			img, s := pc/stripes, pc%stripes
			x := c.x[img*inLen : (img+1)*inLen]
			wk.mat = matrixPacker{data: c.dy[img*outLen : (img+1)*outLen], ld: c.pix, rows: c.p.OutC, cols: c.pix}
			op.a = &wk.mat
			if c.ident {
				wk.mat2 = matrixPacker{data: x, ld: c.pix, rows: c.p.InC, cols: c.pix}
				op.b = &wk.mat2
			} else {
				wk.colT.x = x
				op.b = &wk.colT
			}
			op.m, op.n, op.k = c.p.OutC, c.kdim, c.pix
			op.c, op.ldc, op.ci0, op.cj0 = dst, c.kdim, 0, 0
			op.accumulate, op.rowBias = true, nil
			p0 := s * c.dwStripe
			wk.ws.gemm(op, m0, m1, n0, n1, p0, min(p0+c.dwStripe, c.pix))
		}
	}
	op.a, op.b, op.c = nil, nil, nil
	wk.colT.x, wk.mat.data, wk.mat2.data = nil, nil, nil
	c.free <- wk
}

// inputGrad computes dX_n = col2im(Wᵀ · dY_n) in blocks of whole input
// channels, so blocks write disjoint parts of dx.
func (c *Conv2D) inputGrad(dx, w, dy []float32) {
	c.w, c.dy, c.dx = w, dy, dx
	c.wTPack = matrixPacker{data: w, ld: c.kdim, trans: true, rows: c.kdim, cols: c.p.OutC}
	blocks := (c.p.InC + c.dxBlock - 1) / c.dxBlock
	parallel.ForN(c.maxProcs, c.n*blocks, 1, c.dxFn)
	c.w, c.dy, c.dx = nil, nil, nil
	c.wTPack.data = nil
}

func (c *Conv2D) inputGradUnits(lo, hi int) {
	wk := <-c.free
	blocks := (c.p.InC + c.dxBlock - 1) / c.dxBlock
	inLen, outLen := c.p.InC*c.g.h*c.g.w, c.p.OutC*c.pix
	plane := c.g.h * c.g.w
	kk2 := c.p.Kernel * c.p.Kernel
	op := &wk.op
	for u := lo; u < hi; u++ {
		img, blk := u/blocks, u%blocks
		c0 := blk * c.dxBlock
		c1 := min(c0+c.dxBlock, c.p.InC)
		dx := c.dx[img*inLen : (img+1)*inLen]
		wk.mat = matrixPacker{data: c.dy[img*outLen : (img+1)*outLen], ld: c.pix, trans: true, rows: c.pix, cols: c.p.OutC}
		op.a, op.b = &c.wTPack, &wk.mat
		op.m, op.n, op.k = c.kdim, c.pix, c.p.OutC
		op.accumulate, op.rowBias = false, nil
		if c.ident {
			// col(X) is X itself: the product is dX.
			op.c, op.ldc, op.ci0, op.cj0 = dx, c.pix, 0, 0
			wk.ws.gemm(op, c0, c1, 0, c.pix, 0, op.k)
			continue
		}
		clear(dx[c0*plane : c1*plane])
		r0, r1 := c0*kk2, c1*kk2
		for p0 := 0; p0 < c.pix; p0 += blockN {
			p1 := min(p0+blockN, c.pix)
			op.c, op.ldc, op.ci0, op.cj0 = wk.dcol, p1-p0, r0, p0
			wk.ws.gemm(op, r0, r1, p0, p1, 0, op.k)
			for r := r0; r < r1; r++ {
				row := wk.dcol[(r-r0)*(p1-p0) : (r-r0+1)*(p1-p0)]
				c.g.colRowAdd(dx, row, 1, r, p0, p1-p0)
			}
		}
	}
	op.a, op.b, op.c = nil, nil, nil
	wk.mat.data = nil
	c.free <- wk
}

// directBackward is Backward on the padded-grid path.
func (c *Conv2D) directBackward(dx, dw, x, w, dy []float32) {
	inLen := c.n * c.p.InC * c.g.h * c.g.w
	if dw != nil {
		c.check("Backward", dw, c.WeightLen(), "dweight")
		c.check("Backward", x, inLen, "x")
		clear(c.gg.part)
		if c.shared {
			c.fd.clearUnwritten(c.n * c.p.InC) // as Forward does: another plan wrote it
		}
		c.runTasks(taskPadX, c.n*c.p.InC, x, nil)
		c.runTasks(taskFillGrid, c.n*c.p.OutC, dy, nil)
		c.runTasks(taskWeightGrad, c.gg.units(), nil, nil)
		c.gg.sum(dw, c.p.OutC, c.kdim)
	}
	if dx != nil && c.bd == nil {
		c.check("Backward", dx, inLen, "dx")
		c.check("Backward", w, c.WeightLen(), "weight")
		c.runTasks(taskPadDq, c.n*c.p.OutC, dy, nil)
		for _, ph := range c.phases {
			ph.packWeights(w, false)
			ph.dst = c.dxpad
		}
		c.runTasks(taskPhaseGrad, len(c.phases)*c.phases[0].units(), nil, nil)
		for _, ph := range c.phases {
			ph.dst = nil
		}
		c.runTasks(taskFoldPhases, c.n*c.p.InC, nil, dx)
		return
	}
	if dx != nil {
		c.check("Backward", dx, inLen, "dx")
		c.check("Backward", w, c.WeightLen(), "weight")
		c.runTasks(taskPadDy, c.n*c.p.OutC, dy, nil)
		c.bd.packWeights(w, true)
		c.bd.dst = c.dxpad
		c.runTasks(taskInputGrad, c.bd.units(), nil, nil)
		c.bd.dst = nil
		c.runTasks(taskFold, c.n*c.p.InC, nil, dx)
	}
}
