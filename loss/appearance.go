package loss

// DefaultAlpha is the weight of the SSIM part of the appearance term; the
// L1 part gets 1 − DefaultAlpha (common practice in self-supervised depth).
const DefaultAlpha = 0.85

// AppearanceKernel computes the photometric appearance error between a
// target image I and its reconstruction Î, and its gradient. Per pixel p it
// is
//
//	e(p) = (1/C) Σ_c [ α·clamp((1 − SSIM_c(p))/2, 0, 1) + (1 − α)·|I_c(p) − Î_c(p)| ]
//
// with SSIM from SSIMKernel (3×3 window, edge pixel repeated), and the value
// is the mean of e over the valid pixels of the whole batch:
// Σ_p m(p)e(p) / Σ_p m(p). With no valid pixel the value and the gradients
// are 0.
//
// (1 − SSIM)/2 lies in [0, 1] in exact arithmetic; the clamp only guards
// against round-off in σ² = E[x²] − μ², and where it clips, the gradient of
// that part is 0. The subgradient of |·| at 0 is 0.
type AppearanceKernel struct {
	// SSIM is the kernel of the SSIM part; set SSIM.DataRange for images
	// whose range is not [0, 1].
	SSIM SSIMKernel

	smap, gmap []float32
}

// Eval returns the appearance error of recon against target (N*C*H*W
// values each) over the pixels where mask (N*H*W values, 1 valid, 0
// invalid; nil means all valid) is not 0; mask values act as weights. It
// writes the gradients with respect to target and recon into gradTarget
// and gradRecon (N*C*H*W values, overwritten; nil to skip). alpha is the
// SSIM weight α (DefaultAlpha is common practice; 0 gives pure L1, and
// then the SSIM map is not computed). Eval does not allocate in steady
// state. It panics if a slice length does not match s.
func (k *AppearanceKernel) Eval(gradTarget, gradRecon, target, recon, mask []float32, s Shape, alpha float32) float64 {
	const name = "AppearanceKernel.Eval"
	checkShape(name, s)
	n := s.N * s.C * s.H * s.W
	plane := s.H * s.W
	checkLen(name, "target", target, n, s)
	checkLen(name, "recon", recon, n, s)
	checkOptLen(name, "mask", mask, s.N*plane, s)
	checkOptLen(name, "gradTarget", gradTarget, n, s)
	checkOptLen(name, "gradRecon", gradRecon, n, s)

	var count float64
	if mask == nil {
		count = float64(s.N * plane)
	} else {
		for _, m := range mask {
			count += float64(m)
		}
	}
	wantGrad := gradTarget != nil || gradRecon != nil
	if count == 0 {
		clear(gradTarget)
		clear(gradRecon)
		return 0
	}
	useSSIM := alpha != 0
	if useSSIM {
		k.smap = grow(k.smap, n)
		k.SSIM.Forward(k.smap, target, recon, s)
		if wantGrad {
			k.gmap = grow(k.gmap, n)
		}
	}
	// scale turns a per-channel term into its share of the mean.
	scale := 1 / (float64(s.C) * count)
	gSSIM := float32(-0.5 * float64(alpha) * scale)
	gL1 := float32((1 - float64(alpha)) * scale)
	beta := 1 - alpha
	var sum float64
	// One pass: the value, the L1 gradient (written), and the upstream
	// gradient of the SSIM map, whose backward pass then adds its part.
	for b := 0; b < s.N; b++ {
		var mrow []float32
		if mask != nil {
			mrow = mask[b*plane : (b+1)*plane]
		}
		for c := 0; c < s.C; c++ {
			o := (b*s.C + c) * plane
			tg, rc := target[o:o+plane], recon[o:o+plane]
			var sm, gm, gt, gr []float32
			if useSSIM {
				sm = k.smap[o : o+plane]
				if wantGrad {
					gm = k.gmap[o : o+plane]
				}
			}
			if gradTarget != nil {
				gt = gradTarget[o : o+plane]
			}
			if gradRecon != nil {
				gr = gradRecon[o : o+plane]
			}
			var rowSum float64
			for i := range tg {
				m := float32(1)
				if mrow != nil {
					m = mrow[i]
				}
				// g is the L1 gradient with respect to recon.
				ad, g := absSign(rc[i]-tg[i], gL1*m)
				e := beta * ad
				if sm != nil {
					d := (1 - sm[i]) / 2
					gs := gSSIM * m
					if d < 0 {
						d, gs = 0, 0
					} else if d > 1 {
						d, gs = 1, 0
					}
					e += alpha * d
					if gm != nil {
						gm[i] = gs
					}
				}
				if m != 0 {
					rowSum += float64(m * e)
				}
				if gr != nil {
					gr[i] = g
				}
				if gt != nil {
					gt[i] = -g
				}
			}
			sum += rowSum
		}
	}
	if wantGrad && useSSIM {
		k.SSIM.backward(gradTarget, gradRecon, k.gmap, target, recon, s, true)
	}
	return sum * scale
}
