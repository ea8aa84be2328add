package synth

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"sort"
	"sync"
	"testing"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/planar"
)

// TestRowShiftPlane renders the textured fronto-parallel plane with a rig
// drawn as for a varied pair and the right camera one whole pixel lower
// (RowShift 1, twice the largest drawn, so that the check needs no
// interpolation). Disparity must be f·B/Z (the pinhole stereo relation,
// common practice) and the right image at (x − d, y + 1) must equal the
// left image at (x, y), the convention of Capture.RowShift.
func TestRowShiftPlane(t *testing.T) {
	const w, h, shift = 96, 48, 6
	for seed := uint64(1); seed <= 4; seed++ {
		c := drawCapture(rand.New(rand.NewPCG(seed, 7)), 0.3)
		rig, err := variedRig(Orchard, &c, w, h)
		if err != nil {
			t.Fatal(err)
		}
		if want := float64(w) / 2 / math.Tan(c.HFOV/2); math.Abs(rig.Fx-want) > 1e-9*want || rig.Baseline != c.Baseline {
			t.Fatalf("rig focal %v baseline %v, want %v and %v", rig.Fx, rig.Baseline, want, c.Baseline)
		}
		z := rig.Fx * rig.Baseline / shift
		p := renderShifted(planeScene(z), rig, 2, 1)
		for i := range p.DispLeft.Pix {
			if d := float64(p.DispLeft.Pix[i]) * w; math.Abs(d-shift) > 1e-5*shift {
				t.Fatalf("seed %d: left disparity %v px, want f·B/Z = %v", seed, d, shift)
			}
			if d := float64(p.DispRight.Pix[i]) * w; math.Abs(d-shift) > 1e-5*shift {
				t.Fatalf("seed %d: right disparity %v px, want %v", seed, d, shift)
			}
		}
		var maxDiff float64
		plane := w * h
		for y := 0; y+1 < h; y++ {
			for x := shift; x < w; x++ {
				for k := 0; k < 3; k++ {
					l := p.Left.Pix[k*plane+y*w+x]
					r := p.Right.Pix[k*plane+(y+1)*w+x-shift]
					maxDiff = math.Max(maxDiff, math.Abs(float64(l-r)))
				}
			}
		}
		// As in TestFrontoParallelPlane: only ray rounding differs.
		if maxDiff > 1e-5 {
			t.Errorf("seed %d: right(x−%d, y+1) differs from left(x, y) by up to %v", seed, shift, maxDiff)
		}
	}
}

// variedStyles are the styles checked varied: the new ones by default and
// the greenhouse with VaryAll.
var variedStyles = []struct {
	style Style
	vary  Variation
}{{Orchard, VaryDefault}, {Workshop, VaryDefault}, {Greenhouse, VaryAll}}

type variedPair struct {
	name         string
	style        Style
	clean, final *Pair // without and with blur, gain and noise
}

var (
	variedOnce  sync.Once
	variedCache []variedPair
	variedErr   error
)

// variedPairs renders pairs 0–2 of seed 11 at the default size of each of
// variedStyles, with and without the image effects, once.
func variedPairs(t *testing.T) []variedPair {
	t.Helper()
	variedOnce.Do(func() {
		for _, vs := range variedStyles {
			o, err := (&Options{Vary: vs.vary}).resolved()
			if err != nil {
				variedErr = err
				return
			}
			for i := 0; i < 3; i++ {
				clean, err := generatePair(vs.style, 11, i, o, false)
				if err != nil {
					variedErr = err
					return
				}
				final, err := generatePair(vs.style, 11, i, o, true)
				if err != nil {
					variedErr = err
					return
				}
				variedCache = append(variedCache, variedPair{vs.style.String() + " " + string(rune('0'+i)), vs.style, clean, final})
			}
		}
	})
	if variedErr != nil {
		t.Fatal(variedErr)
	}
	return variedCache
}

// rebuild2D samples the right image bilinearly at (x − d_L, y + rowShift)
// for every left pixel, divides it by gainRatio per channel and compares
// it with the left image, over the pixels visible in the right view whose
// sample lies inside the right image and where neither image is clipped
// (below 1/255 or above 254/255). Both images are rounded to 8 bits first.
func rebuild2D(t *testing.T, p *Pair, rowShift float64, gainRatio [3]float64, dispShiftPx float64) photometric {
	t.Helper()
	left, right := quantize(t, p.Left), quantize(t, p.Right)
	w, h := p.Rig.Width, p.Rig.Height
	plane := w * h
	var st photometric
	const lo, hi = 1.0 / 255, 254.0 / 255
	eachMatch(p, rowShift, dispShiftPx, func(x, y int, c cell) {
		i := y*w + x
		if p.VisibleLeft.Pix[i] == 0 {
			return
		}
		var e float64
		for k := 0; k < 3; k++ {
			r := right.Pix[k*plane:]
			s := c.sample(func(x, y int) float64 { return float64(r[y*w+x]) })
			l := float64(left.Pix[k*plane+i])
			if l < lo || l > hi || s < lo || s > hi {
				return // clipped
			}
			e += math.Abs(s/gainRatio[k] - l)
		}
		st.add(e/3, smoothAround(p, x, y, 0.25))
	})
	return st.done(t, "no pixels compared")
}

// cell is the bilinear cell x0 … x0+1, y0 … y0+1 of a sample position and
// the position's fractions fx, fy past x0, y0.
type cell struct {
	x0, y0 int
	fx, fy float64
}

// sample interpolates v(x, y) bilinearly at the cell's position.
func (c cell) sample(v func(x, y int) float64) float64 {
	x0, y0, fx, fy := c.x0, c.y0, c.fx, c.fy
	return (1-fy)*((1-fx)*v(x0, y0)+fx*v(x0+1, y0)) + fy*((1-fx)*v(x0, y0+1)+fx*v(x0+1, y0+1))
}

// eachMatch calls f, row by row, for every left pixel (x, y) whose match
// in the right view, (x − d_L − dispShiftPx, y + rowShift) with d_L the
// left truth in pixels, lies inside the right image, with the match's cell.
func eachMatch(p *Pair, rowShift, dispShiftPx float64, f func(x, y int, c cell)) {
	w, h := p.Rig.Width, p.Rig.Height
	for y := 0; y < h; y++ {
		y0, fy, ok := sampleCell(float64(y)+rowShift, h)
		if !ok {
			continue
		}
		for x := 0; x < w; x++ {
			xs := float64(x) - float64(p.DispLeft.Pix[y*w+x])*float64(w) - dispShiftPx
			if x0, fx, ok := sampleCell(xs, w); ok {
				f(x, y, cell{x0, y0, fx, fy})
			}
		}
	}
}

// sampleCell returns the cell i0 … i0+1 of n samples that holds the
// position s for bilinear sampling, and s's fraction past i0; false when s
// lies outside [0, n−1].
func sampleCell(s float64, n int) (i0 int, f float64, ok bool) {
	if s < 0 || s > float64(n-1) {
		return 0, 0, false
	}
	i0 = min(int(math.Floor(s)), n-2)
	return i0, s - float64(i0), true
}

var noGain = [3]float64{1, 1, 1}

// TestVariedWarpRebuildsLeft checks the truth of varied pairs by the
// rebuild of the left image from the right one.
//
// Clean images (the same pair before blur, gain and noise): sampling the
// right image at the true match (x − d, y + RowShift) must rebuild the left
// one for the same reasons as in TestWarpRebuildsLeft (8-bit rounding,
// bilinear interpolation, anti-aliasing at depth edges), within 1.5 times
// its bounds (mean 0.018, away from depth edges 0.015, p95 0.105): the
// interpolation error grows with texture contrast, and a randomly drawn
// material (two random colours) reaches full contrast where the styles'
// own stay below about a third. Measured at 256×128, seed 11, pairs 0–2
// of the orchard, the workshop and the varied greenhouse: mean
// 0.0020–0.0098, away from edges 0.0017–0.0092, p95 0.0088–0.053. A
// disparity off by 1 px must give at least 1.5 times the error (measured
// 1.96–3.9; varied textures can be coarser than the styles' own).
//
// Final images, with the right view divided by its gain relative to the
// left and sampled at the true match: the noise of the two views adds.
// For Gaussian noise of standard deviation σ_L and σ_R the mean absolute
// difference is √(2/π)·√(σ_L² + σ_R²) (common practice), less where
// bilinear sampling averages the right view's noise; blur (σ ≤ 1 px,
// nearly equal in both views) lowers the interpolation error. The bound is
// the clean pair's measured error plus 1.2 times that noise term, with σ
// taken at the pair's mean colour (measured 0.0062–0.0166 against bounds
// 0.011–0.031). Clipped pixels are left out: there the gain difference is
// not invertible.
//
// Final images as a matcher sees them (no gain compensation, the vertical
// misalignment ignored, horizontal disparity only): the true disparity
// must still give less error than the disparity moved by ±½ or ±1 px, so
// the truth stays the photometric optimum a matcher should find.
func TestVariedWarpRebuildsLeft(t *testing.T) {
	const (
		maxMean         = 1.5 * 0.012
		maxInteriorMean = 1.5 * 0.01
		maxP95          = 1.5 * 0.07
	)
	for _, vp := range variedPairs(t) {
		c := vp.final.Capture
		if c == nil {
			t.Fatalf("%s: no capture", vp.name)
		}
		e := rebuild2D(t, vp.clean, c.RowShift, noGain, 0)
		off := rebuild2D(t, vp.clean, c.RowShift, noGain, 1)
		flat := rebuild2D(t, vp.clean, 0, noGain, 0)
		t.Logf("%s clean: mean %.4f, away from edges %.4f, p95 %.4f; +1 px %.4f; row shift %.2f px ignored: %.4f",
			vp.name, e.mean, e.interiorMean, e.p95, off.mean, c.RowShift, flat.mean)
		if e.mean > maxMean || e.interiorMean > maxInteriorMean || e.p95 > maxP95 {
			t.Errorf("%s clean: rebuild error mean %.4f (max %v), away from edges %.4f (max %v), p95 %.4f (max %v)",
				vp.name, e.mean, maxMean, e.interiorMean, maxInteriorMean, e.p95, maxP95)
		}
		if off.mean < 1.5*e.mean {
			t.Errorf("%s clean: a disparity off by 1 px gives %.4f, not clearly above %.4f", vp.name, off.mean, e.mean)
		}

		var ratio [3]float64
		for k := range ratio {
			ratio[k] = c.Gain[1][k] / c.Gain[0][k]
		}
		var meanCol float64
		for _, v := range vp.final.Left.Pix {
			meanCol += float64(v)
		}
		meanCol /= float64(len(vp.final.Left.Pix))
		sL := math.Sqrt(c.ReadNoise*c.ReadNoise + c.ShotNoise*meanCol)
		sR := sL / math.Min(ratio[0], math.Min(ratio[1], ratio[2]))
		noise := math.Sqrt(2/math.Pi) * math.Hypot(sL, sR)
		bound := e.mean + 1.2*noise
		f := rebuild2D(t, vp.final, c.RowShift, ratio, 0)
		t.Logf("%s final (gain ratio %.3f, blur %.2f px, noise σ %.4f): mean %.4f, bound %.4f", vp.name, ratio[1], c.Blur[0], sL, f.mean, bound)
		if f.mean > bound {
			t.Errorf("%s final: rebuild error mean %.4f, bound %.4f (clean %.4f + 1.2 × noise %.4f)", vp.name, f.mean, bound, e.mean, noise)
		}

		raw := rebuild2D(t, vp.final, 0, noGain, 0)
		for _, d := range []float64{-1, -0.5, 0.5, 1} {
			moved := rebuild2D(t, vp.final, 0, noGain, d)
			t.Logf("%s as matched: mean %.4f, %+.1f px %.4f", vp.name, raw.mean, d, moved.mean)
			if moved.mean <= raw.mean {
				t.Errorf("%s as matched: the disparity moved by %+.1f px gives %.4f, not above the truth's %.4f", vp.name, d, moved.mean, raw.mean)
			}
		}
	}
}

// leftRight2D is leftRight with the right disparity sampled bilinearly at
// the true match (x − d_L, y + rowShift): under vertical misalignment the
// right view's truth belongs to its own pixel centres, which lie rowShift
// rows off the left view's.
func leftRight2D(t *testing.T, p *Pair, rowShift float64) lrStats {
	t.Helper()
	w := p.Rig.Width
	var st lrStats
	var diffs []float64
	dr := func(x, y int) float64 { return float64(p.DispRight.Pix[y*w+x]) * float64(w) }
	eachMatch(p, rowShift, 0, func(x, y int, c cell) {
		i := y*w + x
		dl := float64(p.DispLeft.Pix[i]) * float64(w)
		s := c.sample(dr)
		if p.VisibleLeft.Pix[i] == 0 {
			st.occluded++
			if s > dl {
				st.occludedNearer++
			}
			return
		}
		st.visible++
		diffs = append(diffs, math.Abs(dl-s))
		if math.Abs(dl-s) <= 1 {
			st.pass++
			return
		}
		lo, hi := math.Inf(1), math.Inf(-1)
		x0, y0 := c.x0, c.y0
		for _, v := range [4]float64{dr(x0, y0), dr(x0+1, y0), dr(x0, y0+1), dr(x0+1, y0+1)} {
			lo, hi = math.Min(lo, v), math.Max(hi, v)
		}
		if hi-lo <= 1 {
			st.unexplained++
		}
	})
	sort.Float64s(diffs)
	st.median = diffs[len(diffs)/2]
	return st
}

// TestVariedTruth checks each varied pair's rig against its capture and
// the pinhole relation d = f·B/Z at every pixel (common practice), the
// disparity limit of the capture draws, and the left-right consistency of
// the truth as in TestLeftRightConsistency (same bounds), with the right
// disparity sampled at the true match (x − d_L, y + RowShift). Measured at
// 256×128, seed 11: 98.86–100 % of visible pixels pass, 0–24 fail away
// from depth edges, median 4e-8 to 4e-7 px (sub-pixel bilinear samples of
// float32 maps).
func TestVariedTruth(t *testing.T) {
	rigs := map[[2]float64]bool{}
	for _, vp := range variedPairs(t) {
		p, c := vp.final, vp.final.Capture
		r := p.Rig
		if want := float64(r.Width) / 2 / math.Tan(c.HFOV/2); math.Abs(r.Fx-want) > 1e-9*want || r.Baseline != c.Baseline || r.Fy != r.Fx {
			t.Errorf("%s: rig focal %v fy %v baseline %v, capture gives %v and %v", vp.name, r.Fx, r.Fy, r.Baseline, want, c.Baseline)
		}
		if dmax := r.Fx * r.Baseline / r.MinDepth / float64(r.Width); dmax > MaxVariedDisparity*(1+1e-9) {
			t.Errorf("%s: disparity at the minimum depth is %.4f of the width, above %v", vp.name, dmax, MaxVariedDisparity)
		}
		rigs[[2]float64{r.Fx, r.Baseline}] = true
		fb := r.Fx * r.Baseline
		for i, z := range p.DepthLeft.Pix {
			d := float64(p.DispLeft.Pix[i]) * float64(r.Width)
			if math.Abs(d*float64(z)-fb) > 1e-5*fb {
				t.Fatalf("%s pixel %d: d·Z = %v, want f·B = %v", vp.name, i, d*float64(z), fb)
			}
		}
		s := leftRight2D(t, p, c.RowShift)
		frac := float64(s.pass) / float64(s.visible)
		t.Logf("%s: %.4f of visible pixels pass the 1 px check, %d fail away from depth edges, median %.2g px", vp.name, frac, s.unexplained, s.median)
		if frac < minLRPass(vp.style) || s.median > 1e-3 || float64(s.unexplained) > 0.002*float64(s.visible) {
			t.Errorf("%s: %.4f of visible pixels pass the 1 px check (min %v), %d fail away from depth edges, median %.3g px",
				vp.name, frac, minLRPass(vp.style), s.unexplained, s.median)
		}
		if s.occluded == 0 || float64(s.occludedNearer) < 0.85*float64(s.occluded) {
			t.Errorf("%s: %d of %d hidden pixels match a nearer surface (min 85 %%)", vp.name, s.occludedNearer, s.occluded)
		}
	}
	if len(rigs) != len(variedPairs(t)) {
		t.Errorf("%d distinct rigs among %d varied pairs", len(rigs), len(variedPairs(t)))
	}
}

// TestVariedDepthSpan: across pairs of the new styles, depths reach from
// at most 0.35 m to at least 25 m (the span the styles are made for), and
// every pair, at 2:1 and at 1:1 (where the view reaches closest to the
// ground), stays within its rig's range and below MaxVariedDisparity of
// the width in disparity.
func TestVariedDepthSpan(t *testing.T) {
	lo, hi := math.Inf(1), 0.0
	for _, st := range []Style{Orchard, Workshop} {
		for i := 0; i < 36; i++ {
			size := &Options{Width: 64, Height: 32}
			if i >= 24 {
				size = &Options{Width: 48, Height: 48, Samples: 1}
			}
			p, err := Generate(st, 5, i, size)
			if err != nil {
				t.Fatal(err)
			}
			for j, z := range p.DepthLeft.Pix {
				zz := float64(z)
				if !(zz >= p.Rig.MinDepth && zz <= p.Rig.MaxDepth) || !(float64(p.DispLeft.Pix[j]) <= MaxVariedDisparity) {
					t.Fatalf("%s pair %d: depth %v m (rig range [%v, %v]), disparity %v of the width", st, i, zz, p.Rig.MinDepth, p.Rig.MaxDepth, p.DispLeft.Pix[j])
				}
				lo, hi = math.Min(lo, zz), math.Max(hi, zz)
			}
		}
	}
	t.Logf("depths %.3f … %.2f m", lo, hi)
	if lo > 0.35 || hi < 25 {
		t.Errorf("depths span %.3f … %.2f m, want at most 0.35 and at least 25", lo, hi)
	}
}

// TestVariedDataset writes varied pairs and reads each pair's rig back
// from rigs/NAME.json: it must be the pair's rig, no rig.json is written,
// and package dataset opens the folder with each pair's rig. A folder holding a one-rig data
// set is refused.
func TestVariedDataset(t *testing.T) {
	dir := t.TempDir()
	opt := &Options{Width: 48, Height: 24}
	if err := WriteDataset(dir, Orchard, 3, 2, opt); err != nil {
		t.Fatal(err)
	}
	files := readTree(t, dir)
	if _, ok := files[dataset.RigFile]; ok {
		t.Error("varied dataset has a rig.json")
	}
	// Package dataset reads the folder as a set without one rig, each
	// pair with its own.
	ds, err := dataset.Open(dir)
	if err != nil || len(ds.Pairs) != 2 || ds.Rig != nil || !ds.HasRig() {
		t.Fatalf("dataset.Open: %v (want 2 pairs, no set-wide rig, a rig each)", err)
	}
	for i := 0; i < 2; i++ {
		got, err := depth.LoadRig(filepath.Join(dir, dataset.RigsDir, PairName(i)+".json"))
		if err != nil {
			t.Fatal(err)
		}
		p, err := Generate(Orchard, 3, i, opt)
		if err != nil {
			t.Fatal(err)
		}
		if *got != *p.Rig {
			t.Errorf("pair %d: rig file %+v, pair rig %+v", i, got, p.Rig)
		}
		if *ds.Pairs[i].Rig != *p.Rig {
			t.Errorf("pair %d: dataset's rig %+v, pair rig %+v", i, ds.Pairs[i].Rig, p.Rig)
		}
	}
	one := t.TempDir()
	if err := WriteDataset(one, Orchard, 3, 1, &Options{Width: 48, Height: 24, Vary: VaryNone}); err != nil {
		t.Fatal(err)
	}
	if err := WriteDataset(one, Orchard, 3, 1, opt); err == nil {
		t.Error("varied pairs written into a one-rig dataset")
	}
	if _, err := Generate(Orchard, 1, 0, &Options{Vary: Variation(9)}); err == nil {
		t.Error("unknown variation accepted")
	}
}

// TestDevelopDeterministic: the noise of a view depends only on (seed,
// index, style, view), so developing the same clean pair twice gives the
// same bits, and the two views get different noise.
func TestDevelopDeterministic(t *testing.T) {
	c := Capture{Gain: [2][3]float64{{1, 1, 1}, {1, 1, 1}}, ReadNoise: 0.01}
	mk := func() *Pair {
		rig, _ := Orchard.Rig(16, 8)
		img := func() *planar.Image {
			m := planar.New(1, 3, 8, 16)
			for i := range m.Pix {
				m.Pix[i] = 0.5
			}
			return m
		}
		p := &Pair{Rig: rig, Left: img(), Right: img()}
		develop(p, &c, 4, 2, Orchard)
		return p
	}
	a, b := mk(), mk()
	same := true
	for i := range a.Left.Pix {
		if a.Left.Pix[i] != b.Left.Pix[i] || a.Right.Pix[i] != b.Right.Pix[i] {
			t.Fatal("developing twice gives other bits")
		}
		same = same && a.Left.Pix[i] == a.Right.Pix[i]
	}
	if same {
		t.Error("left and right views got the same noise")
	}
}
