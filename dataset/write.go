package dataset

import (
	"errors"
	"fmt"
	"image"
	"image/png"
	"io"
	"os"
	"path/filepath"

	"github.com/parallaxdepth/parallax/depth"
	"github.com/parallaxdepth/parallax/internal/atomicfile"
)

// Create prepares dir to receive pairs taken with rig, at the rig's size:
// it creates dir, left/ and right/, and writes rig.json. If dir already
// holds a rig.json for another rig, Create refuses to mix the two and
// returns an error (a data set has one rig); with the same rig it leaves the
// pairs already there in place. It refuses a dir that holds rigs/ (pairs
// with a rig each, see WritePairRig).
func Create(dir string, rig *depth.Rig) error {
	if rig == nil {
		return errors.New("dataset: Create: nil rig")
	}
	if err := rig.Validate(); err != nil {
		return fmt.Errorf("dataset: %w", err)
	}
	rigPath := filepath.Join(dir, RigFile)
	if _, err := os.Stat(filepath.Join(dir, RigsDir)); err == nil {
		return fmt.Errorf("dataset: %s already holds a data set whose pairs have a rig each (%s/); write a set of one rig into an empty folder", dir, RigsDir)
	}
	if _, err := os.Stat(rigPath); err == nil {
		old, err := depth.LoadRig(rigPath)
		if err != nil {
			return fmt.Errorf("dataset: %s already holds a data set whose rig cannot be read: %w", dir, err)
		}
		if *old != *rig {
			return fmt.Errorf("dataset: %s already holds a data set of another rig (%dx%d, focal %.4g px, baseline %.4g m), not %dx%d, focal %.4g px, baseline %.4g m; write into an empty folder",
				dir, old.Width, old.Height, old.Fx, old.Baseline, rig.Width, rig.Height, rig.Fx, rig.Baseline)
		}
	}
	for _, d := range []string{leftDir, rightDir} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			return fmt.Errorf("dataset: %w", err)
		}
	}
	if err := depth.SaveRig(rigPath, rig); err != nil {
		return fmt.Errorf("dataset: %w", err)
	}
	return nil
}

// WritePairRig writes rig as the own rig of pair name in the data-set
// folder dir: rigs/NAME.json (depth.SaveRig), atomically, for a set whose
// pairs have a rig each. The rig is for the pair's stored size (Open checks
// it). It returns an error if dir holds a rig.json (a set of one rig),
// name is not a plain file name, or the rig is invalid.
func WritePairRig(dir, name string, rig *depth.Rig) error {
	if rig == nil {
		return errors.New("dataset: WritePairRig: nil rig")
	}
	if err := checkName(name); err != nil {
		return err
	}
	if _, err := os.Stat(filepath.Join(dir, RigFile)); err == nil {
		return fmt.Errorf("dataset: %s already holds a data set of one rig (%s); write pairs that have a rig each into an empty folder", dir, RigFile)
	}
	if err := os.MkdirAll(filepath.Join(dir, RigsDir), 0o755); err != nil {
		return fmt.Errorf("dataset: %w", err)
	}
	if err := depth.SaveRig(filepath.Join(dir, RigsDir, name+rigExt), rig); err != nil {
		return fmt.Errorf("dataset: pair %s: %w", name, err)
	}
	return nil
}

func checkName(name string) error {
	if name == "" || filepath.Base(name) != name || name[0] == '.' {
		return fmt.Errorf("dataset: pair name %q must be a plain file name", name)
	}
	return nil
}

// WriteRecord writes r into the data-set folder dir under r.Name, in the layout
// of the package documentation: the images as PNG (left/NAME.png,
// right/NAME.png), disparities and depth as single-channel PFM (invalid
// pixels as 0) and occlusion maps as PNG, for the truth r holds. It creates
// the folders it needs; it writes no rig (Create writes rig.json,
// WritePairRig a pair's own; r.Rig is not read). Every file
// is written atomically. Write every pair of a set with the same truth
// kinds: Open refuses a truth folder that lacks a pair. It returns an error
// if r.Name is not a plain file name, an image is missing, or the sizes
// differ.
func WriteRecord(dir string, r *Record) error {
	if r == nil || r.Left == nil || r.Right == nil {
		return errors.New("dataset: WriteRecord: nil record or image")
	}
	if err := checkName(r.Name); err != nil {
		return err
	}
	size := r.Left.Bounds().Size()
	var steps []func() error
	addImage := func(rel, what string, img image.Image) error {
		if b := img.Bounds().Size(); b != size {
			return fmt.Errorf("dataset: pair %s: %s is %dx%d, the left image %dx%d", r.Name, what, b.X, b.Y, size.X, size.Y)
		}
		steps = append(steps, func() error { return savePNG(filepath.Join(dir, rel), img) })
		return nil
	}
	addMap := func(k Kind, m *depth.Map) error {
		if err := m.Check(string(k)); err != nil {
			return fmt.Errorf("dataset: pair %s: %w", r.Name, err)
		}
		if b := m.Rect.Size(); b != size {
			return fmt.Errorf("dataset: pair %s: %s is %dx%d, the left image %dx%d", r.Name, k, b.X, b.Y, size.X, size.Y)
		}
		steps = append(steps, func() error {
			return depth.SavePFM(filepath.Join(dir, k.Path(r.Name)), values(m), size.X, size.Y, 1)
		})
		return nil
	}
	if err := addImage(filepath.Join(leftDir, r.Name+".png"), "left image", r.Left); err != nil {
		return err
	}
	if err := addImage(filepath.Join(rightDir, r.Name+".png"), "right image", r.Right); err != nil {
		return err
	}
	for _, k := range kinds {
		var err error
		switch {
		case k == DispLeft && r.DispLeft != nil:
			err = addMap(k, &r.DispLeft.Map)
		case k == DispRight && r.DispRight != nil:
			err = addMap(k, &r.DispRight.Map)
		case k == DepthLeft && r.DepthLeft != nil:
			err = addMap(k, &r.DepthLeft.Map)
		case k == OccLeft && r.OccLeft != nil:
			err = addImage(k.Path(r.Name), string(k), r.OccLeft)
		case k == OccRight && r.OccRight != nil:
			err = addImage(k.Path(r.Name), string(k), r.OccRight)
		default:
			continue
		}
		if err != nil {
			return err
		}
		if err := os.MkdirAll(filepath.Join(dir, truthDir, string(k)), 0o755); err != nil {
			return fmt.Errorf("dataset: %w", err)
		}
	}
	for _, d := range []string{leftDir, rightDir} {
		if err := os.MkdirAll(filepath.Join(dir, d), 0o755); err != nil {
			return fmt.Errorf("dataset: %w", err)
		}
	}
	for _, step := range steps {
		if err := step(); err != nil {
			return fmt.Errorf("dataset: writing pair %s: %w", r.Name, err)
		}
	}
	return nil
}

// values returns m's values row by row, invalid pixels as 0.
func values(m *depth.Map) []float32 {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	out := make([]float32, w*h)
	for y := range h {
		for x := range w {
			if i := y*m.Stride + x; m.Mask[i] != 0 {
				out[y*w+x] = m.Pix[i]
			}
		}
	}
	return out
}

// pngEncoder favours speed: at the default level, compression takes about
// as long as rendering a synthetic pair, for files only about 15 % smaller.
var pngEncoder = png.Encoder{CompressionLevel: png.BestSpeed}

// savePNG encodes img as PNG into path atomically.
func savePNG(path string, img image.Image) error {
	return atomicfile.Write(path, "dataset", func(w io.Writer) error { return pngEncoder.Encode(w, img) })
}
