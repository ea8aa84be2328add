package depth

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"image"
	"io"
	"math"
	"strings"

	"github.com/parallaxdepth/parallax/planar"
)

// RigFormat and RigVersion identify the rig JSON schema; ReadRig rejects a
// file whose "format" or "version" differ, and for a version-1 file it says
// exactly what to change (see ReadRig).
const (
	RigFormat  = "parallax-rig"
	RigVersion = 2
)

// maxRigBytes bounds the size of a rig file.
const maxRigBytes = 1 << 16

// Rig describes a rectified stereo rig: the left camera's intrinsics and the
// baseline to the right camera, at the image size Width × Height that the
// pixel quantities refer to.
//
// A point at depth Z metres in front of the left camera has the disparity
// d_px = Fx·Baseline/Z − DeltaCx pixels (see DepthFromPixels).
type Rig struct {
	Width, Height int // image size the other numbers refer to, pixels

	Fx, Fy float64 // focal lengths of the left camera, pixels (horizontal, vertical)
	Cx, Cy float64 // principal point of the left camera, pixels; pixel centres at integer coordinates

	Baseline float64 // distance between the optical centres, metres, > 0

	// DeltaCx is the principal-point difference Cx_right − Cx_left in pixels:
	// 0 for a rig rectified to a shared principal point, non-zero when the
	// rectification moved the two principal points apart horizontally.
	DeltaCx float64

	MinDepth, MaxDepth float64 // depth range of interest, metres, 0 ≤ MinDepth < MaxDepth
}

// rigJSON is the file schema. Every field is a pointer so that a missing
// field is told apart from a zero.
type rigJSON struct {
	Format   *string  `json:"format"`
	Version  *int     `json:"version"`
	Width    *int     `json:"width_px"`
	Height   *int     `json:"height_px"`
	Fx       *float64 `json:"fx_px"`
	Fy       *float64 `json:"fy_px"`
	Cx       *float64 `json:"cx_px"`
	Cy       *float64 `json:"cy_px"`
	Baseline *float64 `json:"baseline_m"`
	DeltaCx  *float64 `json:"delta_cx_px"`
	MinDepth *float64 `json:"min_depth_m"`
	MaxDepth *float64 `json:"max_depth_m"`
}

// rigV1Migration says how to turn a version-1 rig file into version 2.
const rigV1Migration = `version 1 is no longer read; to migrate, set "version": 2, ` +
	`rename "doffs_px" to "delta_cx_px" (same value: the right camera's cx minus the left's, pixels) ` +
	`and delete "focal_px" (version 1 required it to equal "fx_px", which stays)`

// ReadRig reads a rig from its JSON form and validates it. Every field of
// the schema is required; unknown fields and repeated fields are rejected,
// so that a typo cannot silently leave a value at zero or override another.
// Errors name the offending field. The schema (version 2), with the
// Middlebury 2014 Motorcycle calibration as an example:
//
//	{
//	  "format": "parallax-rig",
//	  "version": 2,
//	  "width_px": 741,
//	  "height_px": 500,
//	  "fx_px": 994.978,
//	  "fy_px": 994.978,
//	  "cx_px": 311.193,
//	  "cy_px": 254.877,
//	  "baseline_m": 0.193001,
//	  "delta_cx_px": 31.086,
//	  "min_depth_m": 0.5,
//	  "max_depth_m": 10
//	}
//
// A version-1 file is refused with the exact edit that makes it version 2:
// set "version" to 2, rename "doffs_px" to "delta_cx_px" (same value) and
// delete "focal_px" (it had to equal "fx_px").
func ReadRig(r io.Reader) (*Rig, error) {
	data, err := io.ReadAll(io.LimitReader(r, maxRigBytes+1))
	if err != nil {
		return nil, fmt.Errorf("depth: reading rig: %w", err)
	}
	if len(data) > maxRigBytes {
		return nil, fmt.Errorf("depth: rig file is larger than %d bytes", maxRigBytes)
	}
	if err := checkRigKeys(data); err != nil {
		return nil, err
	}
	var v struct {
		Version *int `json:"version"`
	}
	if json.Unmarshal(data, &v) == nil && v.Version != nil && *v.Version == 1 {
		return nil, errors.New("depth: rig JSON: " + rigV1Migration)
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
		{"fx_px", j.Fx, &rig.Fx},
		{"fy_px", j.Fy, &rig.Fy},
		{"cx_px", j.Cx, &rig.Cx},
		{"cy_px", j.Cy, &rig.Cy},
		{"baseline_m", j.Baseline, &rig.Baseline},
		{"delta_cx_px", j.DeltaCx, &rig.DeltaCx},
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

// errRigSyntax stops checkRigKeys at malformed JSON, which the decoder then
// reports with its offset.
var errRigSyntax = errors.New("syntax")

// maxRigNesting bounds how deep checkRigKeys follows nested values; the
// schema has none, so anything deeper is refused by the decoder anyway.
const maxRigNesting = 16

// checkRigKeys returns an error for a key repeated within one JSON object,
// where encoding/json would silently keep the last value.
func checkRigKeys(data []byte) error {
	dec := json.NewDecoder(bytes.NewReader(data))
	if err := walkJSONKeys(dec, 0); err != nil && err != errRigSyntax {
		return err
	}
	return nil
}

// walkJSONKeys reads one JSON value from dec and checks every object in it
// for repeated keys.
func walkJSONKeys(dec *json.Decoder, nesting int) error {
	if nesting > maxRigNesting {
		return errRigSyntax
	}
	tok, err := dec.Token()
	if err != nil {
		return errRigSyntax
	}
	switch tok {
	case json.Delim('{'):
		seen := map[string]bool{}
		for dec.More() {
			k, err := dec.Token()
			key, ok := k.(string)
			if err != nil || !ok {
				return errRigSyntax
			}
			if seen[key] {
				return fmt.Errorf("depth: rig JSON repeats the field %q", key)
			}
			seen[key] = true
			if err := walkJSONKeys(dec, nesting+1); err != nil {
				return err
			}
		}
		if _, err := dec.Token(); err != nil {
			return errRigSyntax
		}
	case json.Delim('['):
		for dec.More() {
			if err := walkJSONKeys(dec, nesting+1); err != nil {
				return err
			}
		}
		if _, err := dec.Token(); err != nil {
			return errRigSyntax
		}
	}
	return nil
}

// LoadRig reads and validates the rig JSON file at path.
func LoadRig(path string) (*Rig, error) {
	return loadFile(path, ReadRig)
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
		Fx: &r.Fx, Fy: &r.Fy, Cx: &r.Cx, Cy: &r.Cy,
		Baseline: &r.Baseline, DeltaCx: &r.DeltaCx,
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

// Validate returns an error naming the first field of r (by its key in the
// rig file) that is out of range or physically impossible: the size must
// lie in [1, planar.MaxSide] per side with Width·Height ≤ planar.MaxPixels; Fx, Fy and
// Baseline must be positive and finite; both principal points, (Cx, Cy) of
// the left camera and Cx+DeltaCx of the right one, must lie inside the image,
// whose pixels cover [−½, Width−½] × [−½, Height−½]; and the depth range
// must satisfy 0 ≤ MinDepth < MaxDepth < +Inf.
func (r *Rig) Validate() error {
	if r == nil {
		return errors.New("depth: rig is nil")
	}
	if r.Width < 1 || r.Width > planar.MaxSide || r.Height < 1 || r.Height > planar.MaxSide {
		return fmt.Errorf("depth: rig size %dx%d (width_px, height_px): each must lie in [1, %d]", r.Width, r.Height, planar.MaxSide)
	}
	if r.Width*r.Height > planar.MaxPixels {
		return fmt.Errorf("depth: rig size %dx%d (width_px, height_px) exceeds %d pixels", r.Width, r.Height, planar.MaxPixels)
	}
	finite := func(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
	for _, f := range []struct {
		name string
		v    float64
	}{{"fx_px", r.Fx}, {"fy_px", r.Fy}, {"baseline_m", r.Baseline}} {
		if !finite(f.v) || f.v <= 0 {
			return fmt.Errorf("depth: rig %s is %v: it must be positive and finite", f.name, f.v)
		}
	}
	xMax, yMax := float64(r.Width)-0.5, float64(r.Height)-0.5
	for _, f := range []struct {
		name, what string
		v, max     float64
	}{
		{"cx_px", "the left principal point", r.Cx, xMax},
		{"cy_px", "the principal points", r.Cy, yMax},
		{"delta_cx_px", "the right principal point cx_px+delta_cx_px", r.Cx + r.DeltaCx, xMax},
	} {
		if !finite(f.v) || f.v < -0.5 || f.v > f.max {
			return fmt.Errorf("depth: rig %s puts %s at %v px, outside the %dx%d image ([-0.5, %v])", f.name, f.what, f.v, r.Width, r.Height, f.max)
		}
	}
	if !finite(r.MinDepth) || r.MinDepth < 0 {
		return fmt.Errorf("depth: rig min_depth_m is %v: it must be finite and not negative", r.MinDepth)
	}
	if !finite(r.MaxDepth) || r.MaxDepth <= r.MinDepth {
		return fmt.Errorf("depth: rig max_depth_m is %v: it must be finite and larger than min_depth_m %v", r.MaxDepth, r.MinDepth)
	}
	return nil
}

// MaxAspectChange is the largest relative difference between the aspect
// ratio of an image and that of its rig that Scaled accepts: 1 %. Rounding a
// resized image to whole pixels changes the ratio by less (741×500 halved to
// 370×250: 0.14 %), while a cropped image or another camera's usually
// changes it by more, and rescaling the rig to it would give wrong depth
// without any sign of it.
const MaxAspectChange = 0.01

// CheckAspect returns an error if an image of width × height pixels has an
// aspect ratio that differs from the rig's by more than MaxAspectChange,
// the one rule by which this module decides whether an image can have been
// taken by the rig's cameras at another resolution.
func (r *Rig) CheckAspect(width, height int) error {
	if err := r.Validate(); err != nil {
		return err
	}
	if width < 1 || height < 1 {
		return fmt.Errorf("depth: image size %dx%d is empty", width, height)
	}
	a := float64(width) / float64(height)
	ra := float64(r.Width) / float64(r.Height)
	if math.Abs(a/ra-1) <= MaxAspectChange {
		return nil
	}
	return fmt.Errorf("depth: the image is %dx%d but the rig is for %dx%d images, another aspect ratio (%.1f %% apart, at most %g %% allowed): a cropped image or another camera?",
		width, height, r.Width, r.Height, 100*math.Abs(a/ra-1), 100*MaxAspectChange)
}

// Scaled returns the same rig described at the image size width × height,
// for images resized from the rig's: it returns an error if the aspect
// ratios differ by more than MaxAspectChange (see CheckAspect), if r is
// invalid or if the new size is out of range. Stretched rescales without
// the aspect-ratio check.
func (r *Rig) Scaled(width, height int) (*Rig, error) {
	if err := r.CheckAspect(width, height); err != nil {
		return nil, err
	}
	return r.Stretched(width, height)
}

// Stretched returns the rig of the rig's images resized to width × height
// whatever their aspect ratio, which is exact for images stretched that way
// (the network's input, for instance) and wrong for images that were not.
// Horizontal pixel quantities (Fx, DeltaCx) scale by width/Width and Fy by
// height/Height; the principal point follows the resampling convention in
// which the image covers [−½, W−½] (image/draw and x/image/draw resize this
// way): Cx' = (Cx+½)·width/Width − ½, and likewise Cy. Baseline and the depth
// range do not change. Stretched returns an error if r is invalid or the new
// size is out of range.
func (r *Rig) Stretched(width, height int) (*Rig, error) {
	if err := r.Validate(); err != nil {
		return nil, err
	}
	if width < 1 || width > planar.MaxSide || height < 1 || height > planar.MaxSide || width*height > planar.MaxPixels {
		return nil, fmt.Errorf("depth: rescaling the rig: size %dx%d out of range (sides in [1, %d], at most %d pixels)", width, height, planar.MaxSide, planar.MaxPixels)
	}
	sx := float64(width) / float64(r.Width)
	sy := float64(height) / float64(r.Height)
	s := *r
	s.Width, s.Height = width, height
	s.Fx *= sx
	s.DeltaCx *= sx
	s.Fy *= sy
	s.Cx = (r.Cx+0.5)*sx - 0.5
	s.Cy = (r.Cy+0.5)*sy - 0.5
	return &s, nil
}

// Cropped returns the rig of both images cropped to rect, given in the
// pixel coordinates of r's image: the size becomes rect's, the principal
// point moves by −rect.Min, and focal lengths, DeltaCx (both views shift
// alike), baseline and depth range stay. It returns an error if r is
// invalid, if rect is empty or not inside the image, or if the crop leaves a
// principal point outside the cropped image.
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
		return nil, fmt.Errorf("depth: Cropped to %v: %s", rect, strings.TrimPrefix(err.Error(), "depth: "))
	}
	return &c, nil
}
