package synth

import (
	"math"
	"testing"

	"github.com/parallaxdepth/parallax/depth"
)

// testRig returns a small greenhouse rig for the analytic scenes.
func testRig(t *testing.T, w, h int) *depth.Rig {
	t.Helper()
	rig, err := Greenhouse.Rig(w, h)
	if err != nil {
		t.Fatal(err)
	}
	return rig
}

// planeScene is a textured fronto-parallel plane at depth z in front of a
// camera at the origin looking along +z, lit from a fixed direction.
func planeScene(z float64) *scene {
	sc := &scene{
		mats: []material{{kind: texLabels, base: rgb{0.6, 0.45, 0.3}, alt: rgb{0.5, 0.38, 0.25},
			ink: rgb{0.1, 0.1, 0.1}, scale: 0.1, density: 0.8, contrast: 0.4, seed: 7}},
		shapes:  []shape{{kind: shapePlane, normal: vec3{0, 0, 1}, offset: z, uvOrigin: vec3{0.013, 0.029, z}}},
		light:   vec3{0.3, 0.8, -0.52}.normalized(),
		ambient: 0.6, diffuse: 0.4,
	}
	sc.setPose(vec3{}, 0, 0)
	return sc
}

// TestRigFocal checks the style rigs against the pinhole relation between
// field of view and focal length, f = (W/2)/tan(hfov/2) (common practice),
// with the fields of view stated in the Style docs.
func TestRigFocal(t *testing.T) {
	for _, c := range []struct {
		style    Style
		hfovDeg  float64
		baseline float64
	}{{Greenhouse, 72, 0.12}, {Storage, 60, 0.1}, {Orchard, 80, 0.1}, {Workshop, 70, 0.08}} {
		for _, w := range []int{256, 640} {
			rig, err := c.style.Rig(w, w/2)
			if err != nil {
				t.Fatal(err)
			}
			want := float64(w) / 2 / math.Tan(c.hfovDeg/2*math.Pi/180)
			if math.Abs(rig.Fx-want) > 1e-9*want || rig.Fx != rig.Fx || rig.Fy != rig.Fx {
				t.Errorf("%s at width %d: focal %v fx %v fy %v, want %v", c.style, w, rig.Fx, rig.Fx, rig.Fy, want)
			}
			if rig.Baseline != c.baseline || rig.DeltaCx != 0 {
				t.Errorf("%s: baseline %v delta_cx %v, want %v and 0", c.style, rig.Baseline, rig.DeltaCx, c.baseline)
			}
			if rig.Cx != float64(w-1)/2 || rig.Cy != float64(w/2-1)/2 {
				t.Errorf("%s: principal point (%v, %v), want the image centre", c.style, rig.Cx, rig.Cy)
			}
		}
	}
}

// TestFrontoParallelPlane renders a plane at depth Z facing the rig. Every
// pixel's disparity must be f·B/Z and its depth Z (the pinhole stereo
// relation, common practice); the right image must equal the left image
// shifted by that disparity, which is chosen to be a whole number of pixels;
// and visibility must be 0 exactly in the strip that leaves the other view.
func TestFrontoParallelPlane(t *testing.T) {
	const w, h = 96, 48
	rig := testRig(t, w, h)
	const shift = 7 // pixels
	z := rig.Fx * rig.Baseline / shift
	p := render(planeScene(z), rig, 2)

	wantFrac := rig.Fx * rig.Baseline / z / float64(w)
	for i := range p.DispLeft.Pix {
		if d := float64(p.DispLeft.Pix[i]); math.Abs(d-wantFrac) > 1e-6*wantFrac {
			t.Fatalf("left disparity at %d is %v, want f·B/Z/W = %v", i, d, wantFrac)
		}
		if d := float64(p.DispRight.Pix[i]); math.Abs(d-wantFrac) > 1e-6*wantFrac {
			t.Fatalf("right disparity at %d is %v, want %v", i, d, wantFrac)
		}
		if dz := float64(p.DepthLeft.Pix[i]); math.Abs(dz-z) > 1e-6*z {
			t.Fatalf("depth at %d is %v, want %v", i, dz, z)
		}
	}
	plane := w * h
	var maxDiff float64
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			i := y*w + x
			// Left x is seen at x−7 in the right view, inside it iff x ≥ 7.
			if want := float32(b2f(x-shift >= 0)); p.VisibleLeft.Pix[i] != want {
				t.Fatalf("left visibility at (%d, %d) is %v, want %v", x, y, p.VisibleLeft.Pix[i], want)
			}
			if want := float32(b2f(x+shift <= w-1)); p.VisibleRight.Pix[i] != want {
				t.Fatalf("right visibility at (%d, %d) is %v, want %v", x, y, p.VisibleRight.Pix[i], want)
			}
			if x < shift {
				continue
			}
			for c := 0; c < 3; c++ {
				l := p.Left.Pix[c*plane+i]
				r := p.Right.Pix[c*plane+i-shift]
				maxDiff = math.Max(maxDiff, math.Abs(float64(l-r)))
			}
		}
	}
	// The two views see the same surface points; only rounding of the ray
	// arithmetic differs, far below one 8-bit step (1/255).
	if maxDiff > 1e-5 {
		t.Errorf("right image shifted by %d px differs from the left by up to %v", shift, maxDiff)
	}
	// The texture must not be flat, or the comparison above proves nothing.
	var lo, hi float32 = 1, 0
	for _, v := range p.Left.Pix[:plane] {
		lo, hi = min(lo, v), max(hi, v)
	}
	if hi-lo < 0.2 {
		t.Errorf("plane texture spans only [%v, %v]", lo, hi)
	}
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// TestOcclusionBand puts a box in front of the plane. Background pixels just
// left of the box in the left view are hidden from the right camera by the
// box: on each row the hidden band is d_box − d_plane pixels wide (from the
// projection x_R = x − d; common practice for rectified stereo).
func TestOcclusionBand(t *testing.T) {
	const w, h = 128, 64
	rig := testRig(t, w, h)
	fb := rig.Fx * rig.Baseline
	z0, z1 := fb/4, fb/16 // plane disparity 4 px, box front 16 px
	sc := planeScene(z0)
	sc.mats = append(sc.mats, material{kind: texMottled, base: rgb{0.2, 0.5, 0.2}, alt: rgb{0.1, 0.3, 0.1}, scale: 0.05, contrast: 0.5, seed: 3})
	// Box front face at depth z1, spanning x in [−0.1·z1, 0.2·z1] (columns
	// about cx − 0.1·f … cx + 0.2·f) and the middle rows.
	sc.shapes = append(sc.shapes, shape{kind: shapeBox,
		lo: vec3{-0.1 * z1, -0.15 * z1, z1}, hi: vec3{0.2 * z1, 0.15 * z1, z1 + 0.05}, mats: all6(1)})
	p := render(sc, rig, 2)
	want := 16 - 4
	rows := 0
	for y := h/2 - 4; y <= h/2+4; y++ {
		// The box's left edge in the left view.
		edge := -1
		for x := 0; x < w; x++ {
			if p.DispLeft.Pix[y*w+x]*float32(w) > 10 {
				edge = x
				break
			}
		}
		if edge < want+2 {
			t.Fatalf("row %d: box edge at column %d, scene misplaced", y, edge)
		}
		hidden := 0
		for x := edge - 1; x >= 0 && p.VisibleLeft.Pix[y*w+x] == 0; x-- {
			hidden++
		}
		// The hidden band is [a − 12, a) for the box edge a; any half-open
		// interval of length 12 holds exactly 12 pixel centres.
		if hidden != want {
			t.Errorf("row %d: %d hidden pixels left of the box, want %d", y, hidden, want)
		}
		rows++
	}
	if rows == 0 {
		t.Fatal("no rows checked")
	}
}

// TestScenesInRange renders many small pairs of each style: every ray must
// hit a surface (the scenes are closed rooms), every depth must lie in the
// rig's range of interest, the disparity must stay below 0.3 of the width
// (a usual limit of disparity networks; common practice) and some, but not
// most, pixels must be hidden from the other view.
func TestScenesInRange(t *testing.T) {
	for _, st := range Styles {
		var hidden, total int
		for i := 0; i < 12; i++ {
			p, err := Generate(st, 3, i, &Options{Width: 64, Height: 32})
			if err != nil {
				t.Fatal(err)
			}
			for j, z := range p.DepthLeft.Pix {
				if !(float64(z) >= p.Rig.MinDepth && float64(z) <= p.Rig.MaxDepth) {
					t.Fatalf("%s pair %d pixel %d: depth %v m outside [%v, %v]", st, i, j, z, p.Rig.MinDepth, p.Rig.MaxDepth)
				}
				if d := p.DispLeft.Pix[j]; !(d > 0 && d < 0.3) {
					t.Fatalf("%s pair %d pixel %d: disparity %v of the width", st, i, j, d)
				}
				total++
				if p.VisibleLeft.Pix[j] == 0 {
					hidden++
				}
			}
		}
		if f := float64(hidden) / float64(total); f < 0.01 || f > 0.3 {
			t.Errorf("%s: %.3f of left pixels hidden from the right view", st, f)
		}
	}
}

// TestPipes renders horizontal cylinders (a pipe along x in front of the
// camera, one along z below its axis) and checks the depth of the ray
// through a pixel centre against the line-cylinder intersection worked by
// hand: along the image's centre column the rays lie in the plane x = 0,
// where the x pipe's front is the line z = zc − r at height 0 and the z
// pipe's top is the line y = −(h − r).
func TestPipes(t *testing.T) {
	const w, h = 65, 33
	rig := testRig(t, w, h)
	sc := planeScene(6)
	b := &builder{sc: sc}
	const zc, r = 2.0, 0.1
	b.pipe(true, zc, 0, r, -3, 3, 0, 0)
	const hz = 0.5 // the z pipe's axis is hz below the camera
	b.pipe(false, 0, -hz, r, 0.5, 5, 0, 0)
	p := render(sc, rig, 1)
	x := (w - 1) / 2
	checked := 0
	for y := 0; y < h; y++ {
		k := (float64(y) - rig.Cy) / rig.Fy // downward slope of the ray
		// Front of the x pipe: the ray (0, −k·t, t) meets the circle
		// (y)² + (z − zc)² = r² at the smaller root.
		a := 1 + k*k
		bq := -zc
		c := zc*zc - r*r
		var want float64
		if disc := bq*bq - a*c; disc >= 0 {
			want = (-bq - math.Sqrt(disc)) / a
		} else if k > 0 {
			// Top of the z pipe at height −(hz − r), if within its length.
			want = (hz - r) / k
			if want < 0.5 || want > 5 {
				continue
			}
		} else {
			continue
		}
		got := float64(p.DepthLeft.Pix[y*w+x])
		if math.Abs(got-want) > 1e-5*want {
			t.Errorf("row %d: depth %v, want %v", y, got, want)
		}
		checked++
	}
	if checked < 8 {
		t.Fatalf("only %d rows checked", checked)
	}
}
