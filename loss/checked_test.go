package loss

import (
	"encoding/binary"
	"math"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/planar"
	"github.com/parallaxdepth/parallax/warp"
)

func filled(n, c, h, w int, v float32) *planar.Image {
	im := planar.New(n, c, h, w)
	for i := range im.Pix {
		im.Pix[i] = v
	}
	return im
}

func wantErr(t *testing.T, err error, fragment string) {
	t.Helper()
	if err == nil {
		t.Errorf("no error, want one mentioning %q", fragment)
		return
	}
	if !strings.HasPrefix(err.Error(), "loss: ") || !strings.Contains(err.Error(), fragment) {
		t.Errorf("error %q: want prefix \"loss: \" and %q", err, fragment)
	}
}

func TestCheckedErrors(t *testing.T) {
	img := filled(1, 3, 4, 5, 0.5)
	disp := filled(1, 1, 4, 5, 0.1)
	nan := img.Clone()
	nan.Pix[7] = float32(math.NaN())
	inf := disp.Clone()
	inf.Pix[3] = float32(math.Inf(1))
	empty := &planar.Image{N: 1, C: 3, H: 0, W: 5}
	short := &planar.Image{N: 1, C: 3, H: 4, W: 5, Pix: make([]float32, 10)}

	_, err := SSIM(nil, img)
	wantErr(t, err, "nil")
	_, err = SSIM(img, empty)
	wantErr(t, err, "empty")
	_, err = SSIM(img, short)
	wantErr(t, err, "10 values")
	_, err = SSIM(img, filled(1, 3, 4, 6, 0.5))
	wantErr(t, err, "shapes differ")
	_, err = SSIM(nan, img)
	wantErr(t, err, "non-finite")

	_, _, err = Appearance(img, img, filled(1, 3, 4, 5, 1), 0.85)
	wantErr(t, err, "1 channel")
	_, _, err = Appearance(img, img, filled(1, 1, 4, 5, 2), 0.85)
	wantErr(t, err, "outside [0, 1]")
	_, _, err = Appearance(img, img, nil, 1.5)
	wantErr(t, err, "alpha")
	_, _, err = Appearance(img, img, nil, math.NaN())
	wantErr(t, err, "alpha")
	_, _, err = Appearance(img, filled(2, 3, 4, 5, 0.5), nil, 0.85)
	wantErr(t, err, "differ")

	_, _, err = Smoothness(img, img, false)
	wantErr(t, err, "1 channel")
	_, _, err = Smoothness(filled(1, 1, 3, 5, 0.1), img, false)
	wantErr(t, err, "does not match")
	_, _, err = Smoothness(filled(1, 1, 4, 5, 0), img, true)
	wantErr(t, err, "positive mean")
	_, _, err = Smoothness(inf, img, false)
	wantErr(t, err, "non-finite")

	_, _, _, err = Consistency(disp, inf, warp.Zero)
	wantErr(t, err, "non-finite")
	_, _, _, err = Consistency(disp, filled(1, 1, 4, 6, 0.1), warp.Zero)
	wantErr(t, err, "differ")
	_, _, _, err = Consistency(disp, disp, warp.Border(9))
	wantErr(t, err, "border")

	_, _, err = EvalObjective(nil, nil)
	wantErr(t, err, "no scale")
	good := ScaleImages{Left: img, Right: img, DispL: disp, DispR: disp}
	bad := good
	bad.DispR = filled(1, 1, 2, 5, 0.1)
	_, _, err = EvalObjective([]ScaleImages{good, bad}, nil)
	wantErr(t, err, "scale 1")
	neg := DefaultObjectiveOptions()
	neg.Smoothness = -2
	_, _, err = EvalObjective([]ScaleImages{good}, &neg)
	wantErr(t, err, "smoothness weight")
	bad = good
	bad.Right = nan
	_, _, err = EvalObjective([]ScaleImages{good, bad}, nil)
	wantErr(t, err, "right image")

	_, err = Pyramid(empty, 2)
	wantErr(t, err, "empty")
	_, err = Pyramid(img, 0)
	wantErr(t, err, "levels")
}

// TestCheckedMatchesKernels: the checked entry points return what the
// kernels compute.
func TestCheckedMatchesKernels(t *testing.T) {
	fx := loadTorch(t)
	sc := fx.Scales[0]
	im := func(c int, v []float64) *planar.Image {
		return &planar.Image{N: sc.N, C: c, H: sc.H, W: sc.W, Pix: to32(v)}
	}
	scales := []ScaleImages{}
	for _, s := range fx.Scales {
		mk := func(c int, v []float64) *planar.Image {
			return &planar.Image{N: s.N, C: c, H: s.H, W: s.W, Pix: to32(v)}
		}
		scales = append(scales, ScaleImages{Left: mk(s.C, s.Left), Right: mk(s.C, s.Right), DispL: mk(1, s.DispL), DispR: mk(1, s.DispR)})
	}
	terms, grads, err := EvalObjective(scales, nil)
	if err != nil {
		t.Fatal(err)
	}
	closeValue(t, "Evaluate total (PyTorch 1.13.1 fixture)", terms.Total, fx.Terms.Total, 5e-6)
	closeSlices(t, "Evaluate d/ddL", grads[1].DispL.Pix, fx.Scales[1].GradDispL, 2e-5*maxAbs(fx.Scales[1].GradDispL))
	v, gl, gr, err := Consistency(im(1, sc.DispL), im(1, sc.DispR), warp.Zero)
	if err != nil {
		t.Fatal(err)
	}
	closeValue(t, "Consistency (PyTorch 1.13.1 fixture)", v, fx.Consistency.Value, 1e-6)
	closeSlices(t, "Consistency d/ddL", gl.Pix, fx.Consistency.GradL, 1e-5*maxAbs(fx.Consistency.GradL))
	closeSlices(t, "Consistency d/ddR", gr.Pix, fx.Consistency.GradR, 1e-5*maxAbs(fx.Consistency.GradR))
	v, g, err := Smoothness(im(1, sc.DispL), im(sc.C, sc.Left), true)
	if err != nil {
		t.Fatal(err)
	}
	closeValue(t, "Smoothness (PyTorch 1.13.1 fixture)", v, fx.Smoothness["normalized"].Value, 1e-6)
	closeSlices(t, "Smoothness gradient", g.Pix, fx.Smoothness["normalized"].Grad, 1e-5*maxAbs(fx.Smoothness["normalized"].Grad))
	v, g, err = Appearance(im(sc.C, sc.Left), im(sc.C, fx.Appearance.Recon), im(1, fx.Appearance.Mask), DefaultAlpha)
	if err != nil {
		t.Fatal(err)
	}
	closeValue(t, "Appearance (PyTorch 1.13.1 fixture)", v, fx.Appearance.Value, 2e-6)
	closeSlices(t, "Appearance gradient", g.Pix, fx.Appearance.GradRecon, 2e-6)
}

// fuzzImage builds an image of a small shape from fuzz bytes: the first
// bytes pick N, C, H, W (0 allowed, to reach the empty checks), the rest
// fill Pix as float32 bits, which reach NaN, Inf and huge values; a short
// Pix exercises the length check.
func fuzzImage(data []byte, cMax int) (*planar.Image, []byte) {
	if len(data) < 4 {
		return &planar.Image{}, nil
	}
	im := &planar.Image{N: int(data[0] % 3), C: int(data[1]) % (cMax + 1), H: int(data[2] % 7), W: int(data[3] % 9)}
	data = data[4:]
	n := im.N * im.C * im.H * im.W
	for i := 0; i < n && len(data) >= 4; i++ {
		im.Pix = append(im.Pix, math.Float32frombits(binary.LittleEndian.Uint32(data)))
		data = data[4:]
	}
	return im, data
}

func finiteOrErr(t *testing.T, what string, v float64, err error) {
	if err == nil && (math.IsNaN(v) || math.IsInf(v, 0)) {
		t.Fatalf("%s returned %v without an error", what, v)
	}
	if err != nil && !strings.HasPrefix(err.Error(), "loss: ") {
		t.Fatalf("%s error %q lacks the package prefix", what, err)
	}
}

func fuzzSeeds(f *testing.F) {
	seed := func(n, c, h, w byte, vals ...float32) []byte {
		b := []byte{n, c, h, w}
		for _, v := range vals {
			b = binary.LittleEndian.AppendUint32(b, math.Float32bits(v))
		}
		return b
	}
	f.Add(seed(1, 1, 2, 2, 0.1, 0.2, 0.3, 0.4), seed(1, 1, 2, 2, 0.2, 0.2, 0.2, 0.2))
	f.Add(seed(1, 3, 1, 1, 1, 0, float32(math.NaN())), seed(1, 3, 1, 1, 0, 0, 0))
	f.Add(seed(1, 1, 1, 3, 1e30, -1e30, 3), seed(1, 1, 1, 3, 0.5, 0.5, 0.5))
	f.Add([]byte{}, []byte{1})
}

func FuzzSSIM(f *testing.F) {
	fuzzSeeds(f)
	f.Fuzz(func(t *testing.T, a, b []byte) {
		x, _ := fuzzImage(a, 3)
		y, _ := fuzzImage(b, 3)
		if _, err := SSIM(x, y); err != nil && !strings.HasPrefix(err.Error(), "loss: ") {
			t.Fatalf("error %q lacks the package prefix", err)
		}
		v, g, err := Appearance(x, y, nil, 0.85)
		finiteOrErr(t, "Appearance", v, err)
		if err == nil && g == nil {
			t.Fatal("Appearance returned no gradient")
		}
	})
}

func FuzzSmoothnessConsistency(f *testing.F) {
	fuzzSeeds(f)
	f.Fuzz(func(t *testing.T, a, b []byte) {
		d, rest := fuzzImage(a, 1)
		img, _ := fuzzImage(b, 3)
		for _, norm := range []bool{false, true} {
			v, _, err := Smoothness(d, img, norm)
			finiteOrErr(t, "Smoothness", v, err)
		}
		d2, _ := fuzzImage(rest, 1)
		for _, bd := range []warp.Border{warp.Zero, warp.Clamp, 7} {
			v, _, _, err := Consistency(d, d2, bd)
			finiteOrErr(t, "Consistency", v, err)
			v, _, _, err = Consistency(d, d, bd)
			finiteOrErr(t, "Consistency", v, err)
		}
	})
}

func FuzzEvalObjective(f *testing.F) {
	fuzzSeeds(f)
	f.Fuzz(func(t *testing.T, a, b []byte) {
		l, rest := fuzzImage(a, 3)
		dl, _ := fuzzImage(b, 1)
		// The right view reuses the left with a shifted disparity, so that
		// well-formed inputs are reached often.
		r := l
		dr := dl
		if dl.Check("d") == nil {
			dr = dl.Clone()
			for i := range dr.Pix {
				dr.Pix[i] *= 0.5
			}
		}
		opts := DefaultObjectiveOptions()
		if len(rest) > 0 {
			opts.Alpha = float64(rest[0]) / 200
			opts.RawSmoothness = rest[0]%2 == 1
		}
		terms, grads, err := EvalObjective([]ScaleImages{{Left: l, Right: r, DispL: dl, DispR: dr}}, &opts)
		finiteOrErr(t, "Evaluate", terms.Total, err)
		if err == nil && len(grads) != 1 {
			t.Fatalf("%d gradients for 1 scale", len(grads))
		}
		if lv, err := Pyramid(l, 3); err == nil && len(lv) != 3 {
			t.Fatalf("pyramid has %d levels", len(lv))
		}
	})
}

// TestKernelPanicsOnMisuse: slice lengths that disagree with the shape are
// a programmer's error and panic with a message naming the kernel.
func TestKernelPanicsOnMisuse(t *testing.T) {
	s := Shape{N: 1, C: 3, H: 4, W: 5}
	img := make([]float32, 60)
	short := make([]float32, 59)
	disp := make([]float32, 20)
	cases := map[string]func(){
		"SSIM Forward":    func() { var k SSIMKernel; k.Forward(img, img, short, s) },
		"SSIM Backward":   func() { var k SSIMKernel; k.Backward(img, img, img, img, img, s) },
		"Appearance mask": func() { var k AppearanceKernel; k.Eval(nil, nil, img, img, short, s, 0.85) },
		"Smoothness disp": func() { var k SmoothnessKernel; k.Eval(nil, short, img, s, true) },
		"Consistency C":   func() { var k ConsistencyKernel; k.Eval(nil, nil, disp, disp, s, warp.Zero) },
		"Objective grads": func() {
			var o Objective
			o.Eval(nil, make([]DispGrad, 2), []Scale{{Left: img, Right: img, DispL: disp, DispR: disp, Shape: s}})
		},
		"Objective shape":    func() { var o Objective; o.Eval(nil, nil, []Scale{{Left: img, Right: img, DispL: disp, DispR: disp}}) },
		"Downsample too low": func() { Downsample2(disp, disp, Shape{N: 1, C: 1, H: 1, W: 20}) },
	}
	for name, f := range cases {
		func() {
			defer func() {
				r := recover()
				if msg, ok := r.(string); !ok || !strings.HasPrefix(msg, "loss.") {
					t.Errorf("%s: recovered %v, want a panic message starting with \"loss.\"", name, r)
				}
			}()
			f()
		}()
	}
}

// TestKernelsNoPanicOnValues: NaN and Inf flow through the kernels into
// the result; they never panic.
func TestKernelsNoPanicOnValues(t *testing.T) {
	s := Shape{N: 1, C: 3, H: 4, W: 5}
	img := make([]float32, 60)
	disp := make([]float32, 20)
	for i := range img {
		img[i] = 0.5
	}
	for i := range disp {
		disp[i] = 0.1
	}
	img[7] = float32(math.NaN())
	disp[3] = float32(math.Inf(1))
	disp[4] = float32(math.NaN())
	var o Objective
	g := []DispGrad{{DispL: make([]float32, 20), DispR: make([]float32, 20)}}
	terms := o.Eval(nil, g, []Scale{{Left: img, Right: img, DispL: disp, DispR: disp, Shape: s}})
	if !math.IsNaN(terms.Total) {
		t.Errorf("total %v with NaN inputs, want NaN", terms.Total)
	}
}
