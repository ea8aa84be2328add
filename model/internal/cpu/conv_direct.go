package cpu

// directK is the longest k pass of the stride-1 forward kernel. Measured
// on Zen 5, passes short enough to keep the input rows in L1 (96) were no
// faster than one pass over all of a 3×3×64 kernel, so only longer k splits.
const directK = 640

// direct computes a convolution on the padded grid. The input is copied
// once into a padded buffer of gw columns; output pixel q = oy·gw+ox of
// that grid reads padded input q + offs[kk] for kernel tap kk, so the rows
// of the GEMM's B operand are plain slices of the padded input and no
// im2col matrix is built. Columns ox >= wo of the grid are computed and
// dropped. For stride s > 1 each padded channel is stored as s² phase
// planes (padded pixel (py, px) in plane (py mod s, px mod s) at
// (py/s, px/s)); a tap then reads one phase plane with unit stride.
type direct struct {
	cin, cout int
	h, w      int // input
	pad       int
	reflect   bool
	k, s, d   int
	hp, wp    int // padded input
	hph, wph  int // one phase plane: ceil(hp/s)×ceil(wp/s)
	gw        int // grid width, wph
	ho, wo    int // output
	plane     int // s²·hph·wph values per channel
	kdim      int // cin·k²
	offs      []int

	// Sized for the micro-kernel in use.
	mr, nr int
	mpad   int       // cout rounded up to mr
	wpack  []float32 // packed weights, mpad/mr panels of kdim×mr
	xpad   []float32 // n images of cin·plane, then slack
	ncb    int       // grid columns per output block
	rows   int       // output rows per unit of work
	dst    []float32 // output of the current call
	bias   []float32
	nimg   int

	// widx, if not nil, maps packed weight (o, kk) to w[widx[o·kdim+kk]]
	// instead of w[o·kdim+kk].
	widx []int
	// Output pixel (o, oy, ox) of image img goes to
	// dst[dstOff + img·dstImg + o·dstChan + oy·wo + ox].
	dstOff, dstImg, dstChan int
}

func newDirect(cin, cout, h, w, k, s, d, pad int, reflect bool, n int) *direct {
	span := (k - 1) * d
	dc := &direct{
		cin: cin, cout: cout, h: h, w: w, pad: pad, reflect: reflect, k: k, s: s, d: d,
		hp: h + 2*pad, wp: w + 2*pad, nimg: n,
	}
	dc.ho, dc.wo = (dc.hp-span-1)/s+1, (dc.wp-span-1)/s+1
	dc.hph, dc.wph = (dc.hp+s-1)/s, (dc.wp+s-1)/s
	dc.gw = dc.wph
	dc.plane = s * s * dc.hph * dc.wph
	dc.kdim = cin * k * k
	dc.offs = make([]int, 0, dc.kdim)
	for c := range cin {
		for ky := range k {
			for kx := range k {
				ry, rx := ky*d%s, kx*d%s
				phase := (ry*s + rx) * dc.hph * dc.wph
				dc.offs = append(dc.offs, c*dc.plane+phase+ky*d/s*dc.wph+kx*d/s)
			}
		}
	}
	dc.xpad = make([]float32, n*cin*dc.plane+dc.slack())
	dc.dstChan = dc.ho * dc.wo
	dc.dstImg = cout * dc.dstChan
	return dc
}

// newPhaseGrad returns the convolution that computes phase (ry, rx) of the
// padded-input gradient of the strided layer fd (fd.cout output channels,
// fd.ho×fd.wo output) from dq, the output gradient zero-padded by pq on
// the top and left into planes of hq×wq. Padded input pixel
// (a·s+ry, b·s+rx) receives W[o][c][ky][kx]·dY[o][a−qy][b−qx] from the taps
// with ky·d = qy·s+ry and kx·d = qx·s+rx, a stride-1 correlation with
// those taps. The result goes to phase plane (ry, rx) of a buffer laid out
// like fd.xpad.
func newPhaseGrad(fd *direct, ry, rx, pq, hq, wq int, dq []float32) *direct {
	s, d, k := fd.s, fd.d, fd.k
	dc := &direct{
		cin: fd.cout, cout: fd.cin, k: k, s: 1, d: d,
		hp: hq, wp: wq, gw: wq, plane: hq * wq,
		ho: fd.hph, wo: fd.wph, nimg: fd.nimg, xpad: dq,
	}
	var tys, txs []int
	for t := range k {
		if t*d%s == ry {
			tys = append(tys, t)
		}
		if t*d%s == rx {
			txs = append(txs, t)
		}
	}
	taps := len(tys) * len(txs)
	dc.kdim = fd.cout * taps
	for o := range fd.cout {
		for _, ky := range tys {
			for _, kx := range txs {
				dc.offs = append(dc.offs, o*dc.plane+(pq-ky*d/s)*wq+pq-kx*d/s)
			}
		}
	}
	dc.widx = make([]int, 0, fd.cin*dc.kdim)
	for c := range fd.cin {
		for o := range fd.cout {
			for _, ky := range tys {
				for _, kx := range txs {
					dc.widx = append(dc.widx, ((o*fd.cin+c)*k+ky)*k+kx)
				}
			}
		}
	}
	dc.dstOff = (ry*s + rx) * fd.hph * fd.wph
	dc.dstChan = fd.plane
	dc.dstImg = fd.cin * fd.plane
	return dc
}

// clearUnwritten zeroes the part of xpad that padding planes input planes
// (padPlane) does not write: at stride 1 each padded plane is written
// whole, so only the slack past them; at a larger stride the phase planes
// may have rows past the padded input, so all of it. Clearing the whole
// buffer of every shared plan took 2 % of a 256×128 stereo call, on its
// serial path.
func (dc *direct) clearUnwritten(planes int) {
	if dc.s > 1 {
		clear(dc.xpad)
		return
	}
	clear(dc.xpad[planes*dc.plane:])
}

// padZero writes plane src (h×w) into dst (hq×wq) at row and column pq,
// zero elsewhere.
func padZero(dst, src []float32, h, w, pq, hq, wq int) {
	for u := range hq {
		row := dst[u*wq : (u+1)*wq]
		iy := u - pq
		if iy < 0 || iy >= h {
			clear(row)
			continue
		}
		clear(row[:pq])
		copy(row[pq:pq+w], src[iy*w:(iy+1)*w])
		clear(row[pq+w:])
	}
}

// foldPhases is foldPlane for s > 1: src is a padded-input gradient in
// phase planes, as fd.xpad holds the input.
func (dc *direct) foldPhases(dst, src []float32) {
	p, w, s, ph := dc.pad, dc.w, dc.s, dc.hph*dc.wph
	clear(dst)
	for py := range dc.hp {
		iy, ok := paddedIndex(py-p, dc.h, dc.reflect)
		if !ok {
			continue
		}
		d := dst[iy*w : (iy+1)*w]
		for rx := range s {
			row := src[(py%s*s+rx)*ph+py/s*dc.wph : (py%s*s+rx)*ph+(py/s+1)*dc.wph]
			j0 := max(0, (p-rx+s-1)/s)
			j1 := max(j0, min(len(row), (w+p-rx+s-1)/s))
			if j1 > j0 {
				out := d[rx+j0*s-p:]
				for t, v := range row[j0:j1] {
					out[t*s] += v
				}
			}
			if !dc.reflect {
				continue
			}
			for j, v := range row {
				if j >= j0 && j < j1 {
					continue
				}
				if ix := rx + j*s - p; ix < dc.wp-p { // skip phase cells past the padded row
					d[reflectIndex(ix, w)] += v
				}
			}
		}
	}
}

// slack is how far past the last image the kernels may read: a panel that
// starts on the last valid grid column reads nr (or a dot chunk) further.
func (dc *direct) slack() int { return 64 + (dc.k-1)*dc.d + 16 }

// size sizes the buffers that depend on the micro-kernel.
func (dc *direct) size(procs int) {
	dc.mr, dc.nr = kern.mr, kern.nr
	dc.mpad = (dc.cout + dc.mr - 1) / dc.mr * dc.mr
	if cap(dc.wpack) < dc.mpad*dc.kdim {
		dc.wpack = make([]float32, dc.mpad*dc.kdim)
	}
	// Rows past cout stay zero: packWeights writes only rows below it.
	dc.wpack = dc.wpack[:dc.mpad*dc.kdim]
	clear(dc.wpack)
	dc.ncb = (256 + dc.nr - 1) / dc.nr * dc.nr
	// At least two units per goroutine over the batch.
	units := max(1, (2*procs+dc.nimg-1)/dc.nimg)
	dc.rows = max(1, (dc.ho+units-1)/units)
}

// packWeights packs OIHW weights into micro-panels. If flip is set the
// weights are used transposed and rotated by 180°, as the input gradient
// needs: output channel o of this convolution and input channel c read
// w[c][o][k-1-ky][k-1-kx] of a layer with dc.cin outputs.
func (dc *direct) packWeights(w []float32, flip bool) {
	mr, k2 := dc.mr, dc.k*dc.k
	for o := range dc.cout {
		panel := dc.wpack[(o/mr)*mr*dc.kdim:]
		i := o % mr
		for kk := range dc.kdim {
			var v float32
			if dc.widx != nil {
				v = w[dc.widx[o*dc.kdim+kk]]
			} else if flip {
				c, t := kk/k2, kk%k2
				v = w[(c*dc.cout+o)*k2+k2-1-t]
			} else {
				v = w[o*dc.kdim+kk]
			}
			panel[kk*mr+i] = v
		}
	}
}

// padPlane copies channel plane src (h×w) into the padded plane dst.
func (dc *direct) padPlane(dst, src []float32) {
	p, w := dc.pad, dc.w
	if dc.s > 1 {
		s, ph := dc.s, dc.hph*dc.wph
		for py := range dc.hp {
			iy, inside := paddedIndex(py-p, dc.h, dc.reflect)
			var row []float32
			if inside {
				row = src[iy*w : (iy+1)*w]
			}
			for rx := range s {
				out := dst[(py%s*s+rx)*ph+py/s*dc.wph : (py%s*s+rx)*ph+(py/s+1)*dc.wph]
				if !inside {
					clear(out)
					continue
				}
				// Column j of this phase is padded column rx + j·s, input
				// column rx + j·s − p: inside the row for j in [j0, j1).
				j0 := max(0, (p-rx+s-1)/s)
				j1 := min(len(out), (w+p-rx+s-1)/s)
				j1 = max(j0, j1)
				in := row[min(rx+j0*s-p, w):]
				seg := out[j0:j1]
				for t := range seg {
					seg[t] = in[t*s]
				}
				for j := range out {
					if j >= j0 && j < j1 {
						continue
					}
					ix := rx + j*s - p
					if dc.reflect {
						out[j] = row[reflectIndex(ix, w)]
					} else {
						out[j] = 0
					}
				}
			}
		}
		return
	}
	for py := range dc.hp {
		row := dst[py*dc.wp : (py+1)*dc.wp]
		iy, ok := paddedIndex(py-p, dc.h, dc.reflect)
		if !ok {
			clear(row)
			continue
		}
		s := src[iy*w : (iy+1)*w]
		copy(row[p:p+w], s)
		for px := range p {
			if dc.reflect {
				row[px] = s[reflectIndex(px-p, w)]
				row[p+w+px] = s[reflectIndex(w+px, w)]
			} else {
				row[px], row[p+w+px] = 0, 0
			}
		}
	}
}

// foldPlane adds the padded-plane gradient src (stride 1 only) onto the
// input-plane gradient dst (overwritten): interior pixels map to themselves, padded
// ones onto the pixels they mirror (reflect) or nowhere (zero).
func (dc *direct) foldPlane(dst, src []float32) {
	p, w := dc.pad, dc.w
	clear(dst)
	for py := range dc.hp {
		row := src[py*dc.wp : (py+1)*dc.wp]
		iy, ok := paddedIndex(py-p, dc.h, dc.reflect)
		if !ok {
			continue
		}
		d := dst[iy*w : (iy+1)*w]
		for x, v := range row[p : p+w] {
			d[x] += v
		}
		if dc.reflect {
			for px := range p {
				d[reflectIndex(px-p, w)] += row[px]
				d[reflectIndex(w+px, w)] += row[p+w+px]
			}
		}
	}
}

// units returns the number of (image, row block) units of a forward pass.
func (dc *direct) units() int { return dc.nimg * ((dc.ho + dc.rows - 1) / dc.rows) }

// forwardUnit computes output rows of one unit into dc.dst, with cbuf a
// worker's buffer of at least mpad×nr values. A tile whose nr grid
// columns are all valid pixels of one output row is written straight into
// the output; others go through cbuf and only their valid columns are
// copied out.
func (dc *direct) forwardUnit(u int, cbuf []float32) {
	blocks := (dc.ho + dc.rows - 1) / dc.rows
	img, blk := u/blocks, u%blocks
	oy0 := blk * dc.rows
	oy1 := min(oy0+dc.rows, dc.ho)
	mr, nr := dc.mr, dc.nr
	x := dc.xpad[img*dc.cin*dc.plane:]
	out := dc.dst[dc.dstOff+img*dc.dstImg:]
	q0, q1 := oy0*dc.gw, (oy1-1)*dc.gw+dc.wo
	ind := kern.ind
	// A tap-less phase (kdim 0) still runs one empty pass, which writes
	// zeros.
	passes := max(1, (dc.kdim+directK-1)/directK)
	step := max(1, (dc.kdim+passes-1)/passes)
	for q := q0; q < q1; q += nr {
		oy, ox := q/dc.gw, q%dc.gw
		fast := ox+nr <= dc.wo
		b := x[q:]
		for ir := 0; ir < dc.mpad; ir += mr {
			rows := min(mr, dc.cout-ir)
			c, ldc := cbuf[ir*nr:], nr
			direct := fast && rows == mr
			if direct {
				c, ldc = out[ir*dc.dstChan+oy*dc.wo+ox:], dc.dstChan
			}
			for k0 := 0; k0 < max(dc.kdim, 1); k0 += step {
				kc := min(step, dc.kdim-k0)
				a := dc.wpack[ir*dc.kdim+k0*mr : ir*dc.kdim+(k0+kc)*mr]
				ind(kc, a, b, dc.offs[k0:k0+kc], c, ldc, k0 > 0)
			}
			if direct {
				if dc.bias != nil {
					for i := range mr {
						addScalar(c[i*ldc:i*ldc+nr], dc.bias[ir+i])
					}
				}
				continue
			}
			// Copy the valid columns of the tile out, adding the bias.
			qe := min(q+nr, q1)
			for y := oy; y*dc.gw < qe; y++ {
				a := max(q-y*dc.gw, 0)
				e := min(qe-y*dc.gw, dc.wo)
				if a >= e {
					continue
				}
				for i := range rows {
					src := c[i*nr+y*dc.gw+a-q : i*nr+y*dc.gw+e-q]
					d := out[(ir+i)*dc.dstChan+y*dc.wo+a : (ir+i)*dc.dstChan+y*dc.wo+e]
					if dc.bias != nil {
						bv := dc.bias[ir+i]
						for t, v := range src {
							d[t] = v + bv
						}
					} else {
						copy(d, src)
					}
				}
			}
		}
	}
}

// dotChunk is the length of the dot products of one weight-gradient kernel
// call: longer amortises the final reduction, shorter keeps the rows in L1.
const dotChunk = 1024

// gridGradUnits is the number of units the padded-grid weight gradient
// aims for, a constant like splitUnits (see there). Fewer, larger units
// than splitUnits measured a few per cent faster per CPU-second on a
// shared 2-core machine (each unit reuses its dY chunks longer).
const gridGradUnits = 8

// maxPartial bounds the values a weight-gradient plan holds in partial sums
// beyond the first (1 MB).
const maxPartial = 1 << 18

// gradGrid lays dY out on the padded-width grid for the weight gradient:
// rows of ldq values, zero in the dropped columns and beyond.
//
// The sum over images and grid positions is cut into pieces, one image's
// chunk of q values each, taken in image-major order. The pieces are
// dealt into parts contiguous runs, each summed in order into its own
// partial gradient, and the parts are added in part order at the end. The
// output columns are cut into kgroups groups of kgroup mk-blocks. A unit
// of work is one (part, column group); units write disjoint values, so
// the result depends only on the shapes and the micro-kernel, never on
// GOMAXPROCS or on which goroutine ran which unit.
type gradGrid struct {
	mo, mk, lanes int
	mopad, kpad   int
	ldq           int // grid values per row, a multiple of lanes
	offs          []int
	dyp           []float32 // n images of mopad×ldq
	chunk         int       // q values per dot call and per piece, a multiple of lanes
	pieces        int       // images × chunks per image
	parts         int       // partial sums
	kgroups       int       // column groups
	kgroup        int       // mk-blocks per column group
	part          []float32 // parts partial sums of mopad×kpad (leading dimension kpad)
}

func newGradGrid(dc *direct) *gradGrid {
	g := &gradGrid{mo: kern.mo, mk: kern.mk, lanes: kern.lanes}
	g.mopad = (dc.cout + g.mo - 1) / g.mo * g.mo
	g.kpad = (dc.kdim + g.mk - 1) / g.mk * g.mk
	q := dc.ho * dc.gw
	g.chunk = (dotChunk + g.lanes - 1) / g.lanes * g.lanes
	g.ldq = (q + g.lanes - 1) / g.lanes * g.lanes
	g.offs = make([]int, g.kpad)
	copy(g.offs, dc.offs)
	g.dyp = make([]float32, dc.nimg*g.mopad*g.ldq)
	g.pieces = dc.nimg * ((g.ldq + g.chunk - 1) / g.chunk)
	// Prefer partial sums to column groups: a unit then reads each chunk
	// of dY from memory once for all its columns and reuses it from cache
	// (16 column groups and one partial sum were about 20% slower on a
	// batch of 4 at 64 output channels, on a shared 2-core machine).
	// Column groups make up the units that the memory bound on partial
	// sums leaves out (large layers, whose dY chunks exceed L2 anyway).
	g.parts = max(1, min(g.pieces, gridGradUnits, maxPartial/(g.mopad*g.kpad)+1))
	g.kgroups, g.kgroup = splitEven(g.kpad/g.mk, (gridGradUnits+g.parts-1)/g.parts)
	g.part = make([]float32, g.parts*g.mopad*g.kpad)
	return g
}

// splitEven cuts n items into at most want groups of equal size (the last
// may be shorter) and returns the number of groups and their size.
func splitEven(n, want int) (groups, size int) {
	size = max(1, (n+want-1)/want)
	return (n + size - 1) / size, size
}

func (g *gradGrid) units() int { return g.parts * g.kgroups }

// fillRow writes output channel o of image img of dy onto the grid.
func (g *gradGrid) fillRow(dc *direct, img, o int, dy []float32) {
	row := g.dyp[(img*g.mopad+o)*g.ldq : (img*g.mopad+o+1)*g.ldq]
	clear(row)
	src := dy[(img*dc.cout+o)*dc.ho*dc.wo:]
	for oy := range dc.ho {
		copy(row[oy*dc.gw:oy*dc.gw+dc.wo], src[oy*dc.wo:(oy+1)*dc.wo])
	}
}

// weightUnit adds unit u's pieces into its columns of its partial sum,
// which must have been cleared.
func (g *gradGrid) weightUnit(dc *direct, u int) {
	p, kg := u/g.kgroups, u%g.kgroups
	out := g.part[p*g.mopad*g.kpad : (p+1)*g.mopad*g.kpad]
	kb0 := kg * g.kgroup * g.mk
	kb1 := min(kb0+g.kgroup*g.mk, g.kpad)
	per := (g.ldq + g.chunk - 1) / g.chunk
	dot := kern.dot
	for pc := p * g.pieces / g.parts; pc < (p+1)*g.pieces/g.parts; pc++ {
		img, q0 := pc/per, pc%per*g.chunk
		n := min(g.chunk, g.ldq-q0)
		xs := dc.xpad[img*dc.cin*dc.plane+q0:]
		dyp := g.dyp[img*g.mopad*g.ldq : (img+1)*g.mopad*g.ldq]
		for kb := kb0; kb < kb1; kb += g.mk {
			offs := g.offs[kb : kb+g.mk]
			for ob := 0; ob < g.mopad; ob += g.mo {
				dot(n, dyp[ob*g.ldq+q0:], g.ldq, xs, offs, out[ob*g.kpad+kb:], g.kpad)
			}
		}
	}
}

// sum writes the weight gradient (cout rows of kdim) into dw: the partial
// sums added in part order.
func (g *gradGrid) sum(dw []float32, cout, kdim int) {
	kp, plen := g.kpad, g.mopad*g.kpad
	for o := range cout {
		row := dw[o*kdim : (o+1)*kdim]
		copy(row, g.part[o*kp:o*kp+kdim])
		for p := 1; p < g.parts; p++ {
			off := p*plen + o*kp
			for i, v := range g.part[off : off+kdim] {
				row[i] += v
			}
		}
	}
}
