package synth

import (
	"bytes"
	"image/png"
	"math"
	"sort"
	"strings"
	"testing"
)

// reprojection compares frame b's disparity with frame a's truth carried
// by the camera motion between them: the point under each pixel of a (its
// depth and the pose) is moved into b's camera and projected, and b's
// inverse depth, interpolated bilinearly there, must match the point's.
// Inverse depth is affine in the image over a plane (common practice), so
// on a flat face the interpolation is exact up to rounding; only pixels
// whose 2×2 neighbourhood in b lies on one smooth surface count. It returns
// the relative differences |1/Z_b − 1/Z| · Z.
func reprojection(t *testing.T, pa, pb *Pair, oa, ob vec3, yawA, yawB, pitch float64) []float64 {
	t.Helper()
	var ca, cb scene
	ca.setPose(oa, yawA, pitch)
	cb.setPose(ob, yawB, pitch)
	r := pa.Rig
	w, h := r.Width, r.Height
	inv := func(x, y int) float64 { return 1 / float64(pb.DepthLeft.Pix[y*w+x]) }
	var rel []float64
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			z := float64(pa.DepthLeft.Pix[y*w+x])
			p := oa.add(ca.right.scale((float64(x) - r.Cx) / r.Fx * z)).add(ca.down.scale((float64(y) - r.Cy) / r.Fy * z)).add(ca.fwd.scale(z))
			q := p.sub(ob)
			zb := q.dot(cb.fwd)
			if zb <= 0 {
				continue
			}
			xb := r.Cx + r.Fx*q.dot(cb.right)/zb
			yb := r.Cy + r.Fy*q.dot(cb.down)/zb
			x0, y0 := int(math.Floor(xb)), int(math.Floor(yb))
			if x0 < 0 || y0 < 0 || x0+1 >= w || y0+1 >= h {
				continue
			}
			fx, fy := xb-float64(x0), yb-float64(y0)
			v00, v10, v01, v11 := inv(x0, y0), inv(x0+1, y0), inv(x0, y0+1), inv(x0+1, y0+1)
			// One smooth surface: the 2×2 inverse depths are nearly affine.
			if math.Abs(v00-v10-v01+v11) > 1e-3*v00 || math.Abs(v00-v10) > 0.05*v00 || math.Abs(v00-v01) > 0.05*v00 {
				continue
			}
			ib := (1-fy)*((1-fx)*v00+fx*v10) + fy*((1-fx)*v01+fx*v11)
			rel = append(rel, math.Abs(ib-1/zb)*zb)
		}
	}
	sort.Float64s(rel)
	return rel
}

// TestDriveMotionTruth drives 4 frames through each style and checks that
// consecutive frames' depth truth agrees with the camera motion (see
// reprojection): the median relative difference must be float32 rounding
// (measured 2.2e-8 to 4e-8, bound 1e-5) and 90 % of the compared pixels
// within 1e-3 (measured up to 3.7e-4 in the orchard, whose canopies are
// curved; curved surfaces and occlusion boundaries make the rest). Moving the later
// camera 2 cm further along the path and 2 cm up (a wrong pose) must raise
// the median at least a hundredfold, so the check sees the motion.
func TestDriveMotionTruth(t *testing.T) {
	for _, st := range Styles {
		d := &Drive{Seed: 2, Legs: []Leg{{st, 4}}}
		plan, err := d.planLeg(0)
		if err != nil {
			t.Fatal(err)
		}
		if plan.step != DefaultDriveStep {
			t.Errorf("%s: step %v, want the default %v (free path %.2f m)", st, plan.step, DefaultDriveStep, plan.freeForward)
		}
		opt := &Options{Width: 128, Height: 64, Vary: VaryNone}
		var frames []*Pair
		for f := 0; f < 4; f++ {
			p, err := GenerateFrame(d, f, opt)
			if err != nil {
				t.Fatal(err)
			}
			frames = append(frames, p)
		}
		for f := 0; f+1 < 4; f++ {
			oa, ya, pitch := plan.pose(f)
			ob, yb, _ := plan.pose(f + 1)
			rel := reprojection(t, frames[f], frames[f+1], oa, ob, ya, yb, pitch)
			// A wrong pose: 2 cm further along the path and 2 cm higher
			// (a shift along the path alone leaves the floor and walls
			// parallel to it where they were).
			wrong := reprojection(t, frames[f], frames[f+1], oa, ob.add(plan.dir.scale(0.02)).add(vec3{0, 0.02, 0}), ya, yb, pitch)
			if len(rel) < 2000 || len(wrong) == 0 {
				t.Fatalf("%s frames %d-%d: only %d pixels compared", st, f, f+1, len(rel))
			}
			med, p90 := rel[len(rel)/2], rel[len(rel)*9/10]
			wmed := wrong[len(wrong)/2]
			if f == 0 {
				t.Logf("%s: %d pixels, median %.2g, 90th percentile %.2g; camera 2 cm off: median %.2g", st, len(rel), med, p90, wmed)
			}
			if med > 1e-5 || p90 > 1e-3 || wmed < 100*math.Max(med, 1e-7) {
				t.Errorf("%s frames %d-%d: median %.3g (max 1e-5), 90th percentile %.3g (max 1e-3), with a wrong pose %.3g", st, f, f+1, med, p90, wmed)
			}
		}
	}
}

// TestDriveDeterminism writes a varied drive through two styles with one
// and with three workers: byte-identical files, each frame equal to the
// frame rendered alone; the capture is the drive's for every frame, the
// noise differs between frames, and the scene changes at the leg boundary.
func TestDriveDeterminism(t *testing.T) {
	d := &Drive{Seed: 5, Legs: []Leg{{Orchard, 3}, {Workshop, 2}}}
	opt := func(workers int) *Options { return &Options{Width: 48, Height: 24, Workers: workers, Vary: VaryAll} }
	a, b := t.TempDir(), t.TempDir()
	if err := WriteDrive(a, d, opt(1)); err != nil {
		t.Fatal(err)
	}
	if err := WriteDrive(b, d, opt(3)); err != nil {
		t.Fatal(err)
	}
	fa, fb := readTree(t, a), readTree(t, b)
	if len(fa) != 5*7+1 || len(fb) != len(fa) {
		t.Fatalf("%d and %d files, want %d", len(fa), len(fb), 5*7+1)
	}
	for name, data := range fa {
		if !bytes.Equal(data, fb[name]) {
			t.Errorf("%s differs between 1 and 3 workers", name)
		}
	}
	var caps []Capture
	for f := 0; f < 5; f++ {
		p, err := GenerateFrame(d, f, opt(1))
		if err != nil {
			t.Fatal(err)
		}
		written, err := png.Decode(bytes.NewReader(fa["left/"+PairName(f)+".png"]))
		if err != nil {
			t.Fatal(err)
		}
		var buf bytes.Buffer
		if err := png.Encode(&buf, p.Left.ToNRGBA(0)); err != nil {
			t.Fatal(err)
		}
		alone, err := png.Decode(&buf)
		if err != nil {
			t.Fatal(err)
		}
		if !samePixels(written, alone) {
			t.Errorf("frame %d rendered alone differs from the written one", f)
		}
		caps = append(caps, *p.Capture)
	}
	for f := 1; f < 5; f++ {
		if caps[f] != caps[0] {
			t.Errorf("frame %d has capture %+v, frame 0 %+v", f, caps[f], caps[0])
		}
	}
	if bytes.Equal(fa["left/000000.png"], fa["left/000001.png"]) {
		t.Error("frames 0 and 1 are identical")
	}
}

// TestDriveLegs checks the frame numbering across legs and the errors.
func TestDriveLegs(t *testing.T) {
	d := &Drive{Legs: []Leg{{Greenhouse, 3}, {Storage, 2}}}
	if d.Frames() != 5 {
		t.Errorf("Frames() = %d, want 5", d.Frames())
	}
	for f, want := range [][2]int{{0, 0}, {0, 1}, {0, 2}, {1, 0}, {1, 1}} {
		leg, within, err := d.Leg(f)
		if err != nil || leg != want[0] || within != want[1] {
			t.Errorf("Leg(%d) = %d, %d, %v; want %d, %d", f, leg, within, err, want[0], want[1])
		}
	}
	_, _, errBeyond := d.Leg(5)
	_, errNoLegs := GenerateFrame(&Drive{}, 0, nil)
	_, errZero := GenerateFrame(&Drive{Legs: []Leg{{Greenhouse, 0}}}, 0, nil)
	_, errStep := GenerateFrame(&Drive{Legs: []Leg{{Greenhouse, 1}}, Step: -1}, 0, nil)
	_, errStyle := GenerateFrame(&Drive{Legs: []Leg{{Style(9), 1}}}, 0, nil)
	_, errFrame := GenerateFrame(d, -1, nil)
	errWrite := WriteDrive(t.TempDir(), nil, nil)
	for name, err := range map[string]error{"beyond": errBeyond, "no legs": errNoLegs, "zero frames": errZero,
		"negative step": errStep, "unknown style": errStyle, "negative frame": errFrame, "nil drive": errWrite} {
		if err == nil || !strings.HasPrefix(err.Error(), "synth: ") {
			t.Errorf("%s: error %v, want one starting with \"synth: \"", name, err)
		}
	}
}

// TestClearance: a box whose front face is 2 m ahead leaves exactly 2 m
// free along the optical axis (rays parallel to the axis meet the face at
// the distance to it).
func TestClearance(t *testing.T) {
	sc := &scene{shapes: []shape{{kind: shapeBox, lo: vec3{-1, -1, 2}, hi: vec3{1, 1, 3}}}}
	if got := clearance(sc, vec3{}, vec3{0, 0, 1}); math.Abs(got-2) > 1e-12 {
		t.Errorf("clearance %v, want 2", got)
	}
	if got := clearance(sc, vec3{}, vec3{1, 0, 0}); !math.IsInf(got, 1) {
		t.Errorf("clearance sideways %v, want +Inf", got)
	}
}

// TestParseLegs reads the leg lists of the command line.
func TestParseLegs(t *testing.T) {
	legs, err := ParseLegs("greenhouse:200, Storage:150")
	if err != nil || len(legs) != 2 || legs[0] != (Leg{Greenhouse, 200}) || legs[1] != (Leg{Storage, 150}) {
		t.Errorf("ParseLegs = %v, %v", legs, err)
	}
	for _, bad := range []string{"", "greenhouse", "greenhouse:x", "garden:3", "storage:0", "storage:-2", "orchard:3,"} {
		if _, err := ParseLegs(bad); err == nil || !strings.HasPrefix(err.Error(), "synth: ") {
			t.Errorf("ParseLegs(%q): error %v", bad, err)
		}
	}
}
