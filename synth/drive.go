package synth

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/dataset"
	"github.com/parallaxdepth/parallax/depth"
)

// Leg is one stretch of a Drive: Frames consecutive frames through one
// scene of Style.
type Leg struct {
	Style  Style
	Frames int
}

// Drive is a continuous camera path: the rig moves through the scene of
// each leg in turn, a frame at a time, and every frame is a stereo pair
// with exact ground truth. One rig records the whole drive. Where one leg
// ends and the next begins the scene changes from one frame to the next,
// as when the robot passes a door that closes behind it.
//
// Within a leg the camera starts at the style's pose for the leg's scene
// and moves horizontally in the direction it faces at the start, Step
// metres per frame, while its heading sways by up to ±DriveSway radians
// over a period of DriveSwayPeriod metres and its height bobs by up to
// ±DriveBob metres; pitch and roll stay fixed, so rows stay horizontal.
// The path is kept clear: of the first few scenes of the style, the leg
// takes the first whose path ahead is free for the leg's length plus half
// a metre (rays cast from the camera and 0.15 m to each side of it), and
// if none is, the longest free one with the step shortened to fit.
type Drive struct {
	// Legs, in driving order; at least one, each with at least one frame.
	Legs []Leg

	// Seed fixes the scenes, the capture and the noise.
	Seed uint64

	// Step is the distance driven per frame, metres; 0 means
	// DefaultDriveStep.
	Step float64
}

// Drive constants.
const (
	// DefaultDriveStep is 5 cm a frame: 0.5 m/s at 10 frames/s.
	DefaultDriveStep = 0.05
	DriveSway        = 0.08 // radians
	DriveSwayPeriod  = 6.0  // metres
	DriveBob         = 0.01 // metres
	driveTries       = 8    // scenes tried per leg for a free path
	driveMargin      = 0.5  // metres kept free beyond the last frame
)

// Frames returns the number of frames of the drive.
func (d *Drive) Frames() int {
	n := 0
	for _, l := range d.Legs {
		n += l.Frames
	}
	return n
}

// Leg returns the index of the leg that frame belongs to and the frame's
// position within it, or an error if the frame is outside the drive.
func (d *Drive) Leg(frame int) (leg, within int, err error) {
	if frame < 0 {
		return 0, 0, fmt.Errorf("synth: frame %d is negative", frame)
	}
	f := frame
	for i, l := range d.Legs {
		if f < l.Frames {
			return i, f, nil
		}
		f -= l.Frames
	}
	return 0, 0, fmt.Errorf("synth: frame %d is beyond the drive's %d frames", frame, d.Frames())
}

// Check returns an error naming the first problem of d: nil or no legs, a
// leg of an unknown style or of no frames, a step that is negative or not
// finite. Every function that plays or renders a drive calls it.
func (d *Drive) Check() error {
	if d == nil || len(d.Legs) == 0 {
		return errors.New("synth: the drive has no legs")
	}
	for i, l := range d.Legs {
		if _, ok := l.Style.spec(); !ok {
			return fmt.Errorf("synth: leg %d: unknown style %d", i, int(l.Style))
		}
		if l.Frames < 1 {
			return fmt.Errorf("synth: leg %d has %d frames, want at least 1", i, l.Frames)
		}
	}
	if !(d.Step >= 0) || math.IsInf(d.Step, 0) {
		return fmt.Errorf("synth: drive step %v m: want a finite value ≥ 0", d.Step)
	}
	return nil
}

func (d *Drive) step() float64 {
	if d.Step == 0 {
		return DefaultDriveStep
	}
	return d.Step
}

// legPlan is a leg's scene, start pose and step.
type legPlan struct {
	sc          *scene
	origin      vec3
	yaw, pitch  float64
	dir         vec3 // horizontal unit direction of travel
	step        float64
	sceneIndex  int
	travel      float64 // metres driven over the leg
	freeForward float64 // free distance ahead at the start
}

// planLeg picks the scene and path of leg i (see Drive).
func (d *Drive) planLeg(i int) (*legPlan, error) {
	l := d.Legs[i]
	want := d.step() * float64(l.Frames-1)
	var best *legPlan
	for k := 0; k < driveTries; k++ {
		idx := i*driveTries + k
		sc, err := buildScene(l.Style, d.Seed, idx)
		if err != nil {
			return nil, err
		}
		yaw := math.Atan2(sc.fwd.x, sc.fwd.z)
		pitch := math.Asin(sc.fwd.y)
		dir := vec3{math.Sin(yaw), 0, math.Cos(yaw)}
		free := clearance(sc, sc.origin, dir)
		p := &legPlan{sc: sc, origin: sc.origin, yaw: yaw, pitch: pitch, dir: dir, step: d.step(), sceneIndex: idx, freeForward: free}
		if free >= want+driveMargin {
			best = p
			break
		}
		if best == nil || free > best.freeForward {
			best = p
		}
	}
	if best.freeForward < want+driveMargin {
		best.step = 0
		if l.Frames > 1 && best.freeForward > driveMargin {
			best.step = (best.freeForward - driveMargin) / float64(l.Frames-1)
		}
	}
	best.travel = best.step * float64(l.Frames-1)
	return best, nil
}

// pose returns the camera pose of frame f of the plan.
func (p *legPlan) pose(f int) (origin vec3, yaw, pitch float64) {
	s := p.step * float64(f)
	origin = p.origin.add(p.dir.scale(s))
	origin.y += DriveBob * math.Sin(2*math.Pi*s/(DriveSwayPeriod/2))
	yaw = p.yaw + DriveSway*math.Sin(2*math.Pi*s/DriveSwayPeriod)
	return origin, yaw, p.pitch
}

// clearance returns the free distance from o along the horizontal unit
// direction dir: the nearest surface met by rays from o and from 0.15 m to
// either side of it, at o's height and 0.1 m lower.
func clearance(sc *scene, o, dir vec3) float64 {
	side := vec3{dir.z, 0, -dir.x}
	free := math.Inf(1)
	for _, dx := range [3]float64{-0.15, 0, 0.15} {
		for _, dy := range [2]float64{0, -0.1} {
			r := newRay(o.add(side.scale(dx)).add(vec3{0, dy, 0}), dir)
			for i := range sc.shapes {
				if t, _, ok := sc.shapes[i].intersect(&r, 1e-6); ok && t < free {
					free = t
				}
			}
		}
	}
	return free
}

// driveCapture draws the drive's capture (one rig and camera for the whole
// drive) from the first leg's style.
func (d *Drive) capture(vary Variation, o Options) (*Capture, error) {
	if vary == VaryNone {
		return nil, nil
	}
	st := d.Legs[0].Style
	sp, _ := st.spec()
	minDepth := sp.minDepth
	for _, l := range d.Legs {
		s, _ := l.Style.spec()
		minDepth = math.Min(minDepth, s.minDepth)
	}
	c := drawCapture(varyStream(d.Seed, 0, st, streamDrive), minDepth)
	return &c, nil
}

// streamDrive is the varyStream of a drive's capture.
const streamDrive = 4

// DriveRig returns the rig that records the drive at the options' size: the
// first leg's style's rig, or, when the options vary the first leg's style
// (Options.Vary resolves by it), one drawn for the drive. It returns an
// error for an invalid drive or options.
func DriveRig(d *Drive, opt *Options) (*depth.Rig, error) {
	_, _, rig, err := d.setup(opt)
	return rig, err
}

// setup resolves opt, checks d, and returns the drive's options, its one
// Capture (nil for an unvaried drive) and its one rig.
func (d *Drive) setup(opt *Options) (Options, *Capture, *depth.Rig, error) {
	o, err := opt.resolved()
	if err != nil {
		return o, nil, nil, err
	}
	if err := d.Check(); err != nil {
		return o, nil, nil, err
	}
	vary, err := o.Vary.resolve(d.Legs[0].Style)
	if err != nil {
		return o, nil, nil, err
	}
	c, err := d.capture(vary, o)
	if err != nil {
		return o, nil, nil, err
	}
	var rig *depth.Rig
	if c == nil {
		rig, err = d.Legs[0].Style.Rig(o.Width, o.Height)
	} else {
		rig, err = variedRig(d.Legs[0].Style, c, o.Width, o.Height)
	}
	return o, c, rig, err
}

// streamDriveScene is the varyStream of a varied drive's leg scene.
const streamDriveScene = 5

// GenerateFrame renders frame number frame of the drive (frames count from
// 0 across the legs). A frame depends only on (drive, frame, size,
// samples, variation), so frames may be rendered in any order and on any
// number of goroutines. Options.Vary resolves by the first leg's style; a
// varied drive keeps one Capture for every frame except the noise, which
// is drawn anew per frame. It returns an error for an invalid drive, a
// frame outside it or invalid options.
func GenerateFrame(d *Drive, frame int, opt *Options) (*Pair, error) {
	o, c, rig, err := d.setup(opt)
	if err != nil {
		return nil, err
	}
	leg, within, err := d.Leg(frame)
	if err != nil {
		return nil, err
	}
	plan, err := d.planLeg(leg)
	if err != nil {
		return nil, err
	}
	st := d.Legs[leg].Style
	if c != nil {
		varyScene(plan.sc, varyStream(d.Seed, plan.sceneIndex, st, streamDriveScene))
	}
	origin, yaw, pitch := plan.pose(within)
	plan.sc.setPose(origin, yaw, pitch)
	if c == nil {
		return render(plan.sc, rig, o.Samples), nil
	}
	p := renderShifted(plan.sc, rig, o.Samples, c.RowShift)
	// Negative indices keep a drive's noise streams apart from those of
	// Generate's pairs (whose indices are ≥ 0).
	develop(p, c, d.Seed, -1-frame, st)
	cc := *c
	p.Capture = &cc
	return p, nil
}

// WriteDrive renders every frame of the drive and writes it into dir in
// the layout of package dataset, with the drive's one rig as rig.json
// (through dataset.Create and dataset.WriteRecord), NAME = PairName(frame). The
// output is the same for any number of workers (opt.Workers). It returns
// the first error met, and refuses a folder that holds a data set of
// another rig.
func WriteDrive(dir string, d *Drive, opt *Options) error {
	o, err := opt.resolved()
	if err != nil {
		return err
	}
	rig, err := DriveRig(d, &o)
	if err != nil {
		return err
	}
	if err := dataset.Create(dir, rig); err != nil {
		return fmt.Errorf("synth: writing a drive at %dx%d: %w", rig.Width, rig.Height, err)
	}
	return forEachPair(context.Background(), d.Frames(), o, func(i int) error {
		p, err := GenerateFrame(d, i, &o)
		if err != nil {
			return err
		}
		r, err := p.Record(PairName(i))
		if err != nil {
			return err
		}
		if err := dataset.WriteRecord(dir, r); err != nil {
			return fmt.Errorf("synth: saving frame %d: %w", i, err)
		}
		return nil
	})
}

// ParseLegs reads a list of legs written STYLE:FRAMES, separated by commas
// ("greenhouse:200,storage:200"), with style names as ParseStyle reads
// them and at least one frame per leg.
func ParseLegs(s string) ([]Leg, error) {
	var legs []Leg
	for _, part := range strings.Split(s, ",") {
		name, count, ok := strings.Cut(strings.TrimSpace(part), ":")
		if !ok {
			return nil, fmt.Errorf("synth: leg %q: want STYLE:FRAMES, e.g. greenhouse:200", part)
		}
		st, err := ParseStyle(name)
		if err != nil {
			return nil, err
		}
		n, err := strconv.Atoi(count)
		if err != nil || n < 1 {
			return nil, fmt.Errorf("synth: leg %q: the frame count must be a whole number ≥ 1", part)
		}
		legs = append(legs, Leg{st, n})
	}
	return legs, nil
}
