package depth

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"os"
)

// RigFormat and RigVersion identify the rig JSON schema; ReadRig rejects a
// file whose "format" or "version" differ.
const (
	RigFormat  = "parallax-rig"
	RigVersion = 1
)

// MaxSide bounds the width and height of a rig and of any map read from a
// file, and MaxPixels bounds width*height, so that a hostile header cannot
// request an absurd allocation.
const (
	MaxSide   = 1 << 15
	MaxPixels = 1 << 25
)

// maxRigBytes bounds the size of a rig file.
const maxRigBytes = 1 << 16

// Rig describes a rectified stereo rig: the left camera's intrinsics and the
// baseline to the right camera, at the image size Width × Height that the
// pixel quantities refer to.
//
// A point at depth Z metres in front of the left camera has the disparity
// d_px = Focal·Baseline/Z − Doffs pixels (see DepthFromPixels).
type Rig struct {
	Width, Height int // image size the other numbers refer to, pixels

	Focal    float64 // focal length in pixels (horizontal, equal to Fx)
	Baseline float64 // distance between the optical centres, metres, > 0
	Doffs    float64 // principal-point x offset between the views (cx_right − cx_left), pixels; 0 for a shared principal point

	Fx, Fy, Cx, Cy float64 // intrinsics of the left camera, pixels; pixel centres at integer coordinates

	MinDepth, MaxDepth float64 // depth range of interest, metres, 0 ≤ MinDepth < MaxDepth
}

// rigJSON is the file schema. Every field is a pointer so that a missing
// field is told apart from a zero.
type rigJSON struct {
	Format   *string  `json:"format"`
	Version  *int     `json:"version"`
	Width    *int     `json:"width_px"`
	Height   *int     `json:"height_px"`
	Focal    *float64 `json:"focal_px"`
	Baseline *float64 `json:"baseline_m"`
	Doffs    *float64 `json:"doffs_px"`
	Fx       *float64 `json:"fx_px"`
	Fy       *float64 `json:"fy_px"`
	Cx       *float64 `json:"cx_px"`
	Cy       *float64 `json:"cy_px"`
	MinDepth *float64 `json:"min_depth_m"`
	MaxDepth *float64 `json:"max_depth_m"`
}

// ReadRig reads a rig from its JSON form and validates it. Every field of
// the schema is required and unknown fields are rejected, so that a typo
// cannot silently leave a value at zero. The schema, with the Middlebury 2014
// Motorcycle calibration as an example:
//
//	{
//	  "format": "parallax-rig",
//	  "version": 1,
//	  "width_px": 741,
//	  "height_px": 500,
//	  "focal_px": 994.978,
//	  "baseline_m": 0.193001,
//	  "doffs_px": 31.086,
//	  "fx_px": 994.978,
//	  "fy_px": 994.978,
//	  "cx_px": 311.193,
//	  "cy_px": 254.877,
//	  "min_depth_m": 0.5,
//	  "max_depth_m": 10
//	}
func ReadRig(r io.Reader) (*Rig, error) {
	data, err := io.ReadAll(io.LimitReader(r, maxRigBytes+1))
	if err != nil {
		return nil, fmt.Errorf("depth: reading rig: %w", err)
	}
	if len(data) > maxRigBytes {
		return nil, fmt.Errorf("depth: rig file is larger than %d bytes", maxRigBytes)
	}
	dec := json.NewDecoder(bytes.NewReader(data))
	dec.DisallowUnknownFields()
	var j rigJSON
	if err := dec.Decode(&j); err != nil {
		return nil, fmt.Errorf("depth: parsing rig JSON: %w", err)
	}
	if dec.More() {
		return nil, errors.New("depth: parsing rig JSON: data after the rig object")
	}
	missing := func(name string) error { return fmt.Errorf("depth: rig JSON lacks the field %q", name) }
	if j.Format == nil {
		return nil, missing("format")
	}
	if *j.Format != RigFormat {
		return nil, fmt.Errorf("depth: rig JSON has format %q, want %q", *j.Format, RigFormat)
	}
	if j.Version == nil {
		return nil, missing("version")
	}
	if *j.Version != RigVersion {
		return nil, fmt.Errorf("depth: rig JSON has version %d, this package reads version %d", *j.Version, RigVersion)
	}
	var rig Rig
	if j.Width == nil {
		return nil, missing("width_px")
	}
	if j.Height == nil {
		return nil, missing("height_px")
	}
	rig.Width, rig.Height = *j.Width, *j.Height
	floats := []struct {
		name string
		p    *float64
		dst  *float64
	}{
		{"focal_px", j.Focal, &rig.Focal},
		{"baseline_m", j.Baseline, &rig.Baseline},
		{"doffs_px", j.Doffs, &rig.Doffs},
		{"fx_px", j.Fx, &rig.Fx},
		{"fy_px", j.Fy, &rig.Fy},
		{"cx_px", j.Cx, &rig.Cx},
		{"cy_px", j.Cy, &rig.Cy},
		{"min_depth_m", j.MinDepth, &rig.MinDepth},
		{"max_depth_m", j.MaxDepth, &rig.MaxDepth},
	}
	for _, f := range floats {
		if f.p == nil {
			return nil, missing(f.name)
		}
		*f.dst = *f.p
	}
	if err := rig.Validate(); err != nil {
		return nil, err
	}
	return &rig, nil
}

// LoadRig reads and validates the rig JSON file at path.
func LoadRig(path string) (*Rig, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, fmt.Errorf("depth: %w", err)
	}
	defer f.Close()
	rig, err := ReadRig(f)
	if err != nil {
		return nil, fmt.Errorf("%w (in %s)", err, path)
	}
	return rig, nil
}

// Write validates r and writes it as indented JSON in the schema ReadRig
// reads.
func (r *Rig) Write(w io.Writer) error {
	if err := r.Validate(); err != nil {
		return err
	}
	format, version := RigFormat, RigVersion
	j := rigJSON{
		Format: &format, Version: &version,
		Width: &r.Width, Height: &r.Height,
		Focal: &r.Focal, Baseline: &r.Baseline, Doffs: &r.Doffs,
		Fx: &r.Fx, Fy: &r.Fy, Cx: &r.Cx, Cy: &r.Cy,
		MinDepth: &r.MinDepth, MaxDepth: &r.MaxDepth,
	}
	data, err := json.MarshalIndent(&j, "", "  ")
	if err != nil {
		return fmt.Errorf("depth: encoding rig: %w", err)
	}
	data = append(data, '\n')
	if _, err := w.Write(data); err != nil {
		return fmt.Errorf("depth: writing rig: %w", err)
	}
	return nil
}

// SaveRig validates r and writes it to path atomically (a temporary file in
// the same directory, synced, then renamed).
func SaveRig(path string, r *Rig) error {
	if r == nil {
		return errors.New("depth: SaveRig: rig is nil")
	}
	if err := r.Validate(); err != nil {
		return err
	}
	return writeFileAtomic(path, r.Write)
}

// relTolFocal is how far Focal and Fx may differ, relative to Focal; they
// name the same number and differ only by rounding in a file.
const relTolFocal = 1e-6

// Validate returns an error naming the first field of r that is out of range:
// sizes must lie in [1, MaxSide] with Width·Height ≤ MaxPixels; Focal, Fx, Fy
// and Baseline must be positive and finite; Focal and Fx must agree to a
// relative 1e-6; Doffs, Cx and Cy must be finite with |Doffs| < Width; and
// the depth range must satisfy 0 ≤ MinDepth < MaxDepth < +Inf.
func (r *Rig) Validate() error {
	if r == nil {
		return errors.New("depth: rig is nil")
	}
	if r.Width < 1 || r.Width > MaxSide || r.Height < 1 || r.Height > MaxSide {
		return fmt.Errorf("depth: rig size %dx%d: width and height must lie in [1, %d]", r.Width, r.Height, MaxSide)
	}
	if r.Width*r.Height > MaxPixels {
		return fmt.Errorf("depth: rig size %dx%d exceeds %d pixels", r.Width, r.Height, MaxPixels)
	}
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	for _, f := range []struct {
		name string
		v    float64
	}{{"focal", r.Focal}, {"fx", r.Fx}, {"fy", r.Fy}, {"baseline", r.Baseline}} {
		if !finite(f.v) || f.v <= 0 {
			return fmt.Errorf("depth: rig %s is %v: it must be positive and finite", f.name, f.v)
		}
	}
	if math.Abs(r.Focal-r.Fx) > relTolFocal*r.Focal {
		return fmt.Errorf("depth: rig focal %v and fx %v differ: they are the same horizontal focal length", r.Focal, r.Fx)
	}
	for _, f := range []struct {
		name string
		v    float64
	}{{"doffs", r.Doffs}, {"cx", r.Cx}, {"cy", r.Cy}} {
		if !finite(f.v) {
			return fmt.Errorf("depth: rig %s is %v: it must be finite", f.name, f.v)
		}
	}
	if math.Abs(r.Doffs) >= float64(r.Width) {
		return fmt.Errorf("depth: rig doffs %v px is not smaller than the width %d px", r.Doffs, r.Width)
	}
	if !finite(r.MinDepth) || !finite(r.MaxDepth) || r.MinDepth < 0 || r.MaxDepth <= r.MinDepth {
		return fmt.Errorf("depth: rig depth range [%v, %v] m: want 0 <= min < max < +Inf", r.MinDepth, r.MaxDepth)
	}
	return nil
}

// Scaled returns the same rig described at the image size width × height.
// Horizontal pixel quantities (Focal, Fx, Doffs) scale by width/Width and Fy
// by height/Height; the principal point follows the resampling convention in
// which the image covers [−½, W−½] (image/draw and x/image/draw resize this
// way): Cx' = (Cx+½)·width/Width − ½, and likewise Cy. Baseline and the depth
// range do not change. Scaled returns an error if r is invalid or the new
// size is out of range.
func (r *Rig) Scaled(width, height int) (*Rig, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	if width < 1 || width > MaxSide || height < 1 || height > MaxSide || width*height > MaxPixels {
		return nil, fmt.Errorf("depth: Scaled: size %dx%d out of range (sides in [1, %d], at most %d pixels)", width, height, MaxSide, MaxPixels)
	}
	sx := float64(width) / float64(r.Width)
	sy := float64(height) / float64(r.Height)
	s := *r
	s.Width, s.Height = width, height
	s.Focal *= sx
	s.Fx *= sx
	s.Doffs *= sx
	s.Fy *= sy
	s.Cx = (r.Cx+0.5)*sx - 0.5
	s.Cy = (r.Cy+0.5)*sy - 0.5
	return &s, nil
}

// Cropped returns the rig of both images cropped to rect, given in the
// pixel coordinates of r's image: the size becomes rect's, the principal
// point moves by −rect.Min, and focal lengths, Doffs (both views shift
// alike), baseline and depth range stay. It returns an error if r is invalid
// or rect is empty or not inside the image.
func (r *Rig) Cropped(rect image.Rectangle) (*Rig, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	if rect.Empty() || !rect.In(image.Rect(0, 0, r.Width, r.Height)) {
		return nil, fmt.Errorf("depth: Cropped: %v is empty or not inside the %dx%d image", rect, r.Width, r.Height)
	}
	c := *r
	c.Width, c.Height = rect.Dx(), rect.Dy()
	c.Cx -= float64(rect.Min.X)
	c.Cy -= float64(rect.Min.Y)
	if err := c.Validate(); err != nil {
		return nil, err
	}
	return &c, nil
}
