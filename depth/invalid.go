package depth

import (
	"errors"
	"fmt"
	"image"
	"math"
)

// An invalid pixel is stored the same way by every writer of this package:
// 0 in the 16-bit PNG (depth.invalid text chunk), NaN in the PFM maps
// written by SaveMapPFM, and no point in a PLY cloud, or a point of NaN
// coordinates in an organised cloud (OrganizedPointCloud), as point-cloud
// consumers expect of a grid.

// Values returns m's values row-major over its bounds, top row first, with
// NaN at the invalid pixels: the layout WritePFM takes.
func (m *Map) Values() []float32 {
	w, h := m.Rect.Dx(), m.Rect.Dy()
	out := make([]float32, w*h)
	nan := float32(math.NaN())
	for y := range h {
		row, mask := m.Pix[y*m.Stride:y*m.Stride+w], m.Mask[y*m.Stride:y*m.Stride+w]
		for x, v := range row {
			if mask[x] == 0 {
				v = nan
			}
			out[y*w+x] = v
		}
	}
	return out
}

// SaveMapPFM writes m to path as a one-channel PFM (see WritePFM),
// atomically, with NaN at the invalid pixels.
func SaveMapPFM(path string, m *Map) error {
	if err := m.Check("map"); err != nil {
		return err
	}
	return SavePFM(path, m.Values(), m.Rect.Dx(), m.Rect.Dy(), 1)
}

// MapFromPFM turns the samples of a one-channel PFM (as LoadPFM returns
// them) into a map with bounds (0, 0)–(width, height): NaN and ±Inf
// samples are invalid pixels, all others valid (any sign: the caller's
// rules apply after).
func MapFromPFM(pix []float32, width, height int) (*Map, error) {
	if width < 1 || height < 1 || len(pix) != width*height {
		return nil, fmt.Errorf("depth: MapFromPFM: %d samples for %dx%d", len(pix), width, height)
	}
	m, err := newMap(image.Rect(0, 0, width, height))
	if err != nil {
		return nil, err
	}
	for i, v := range pix {
		if finite32(v) {
			m.Pix[i], m.Mask[i] = v, 1
		}
	}
	return &m, nil
}

// OrganizedPointCloud is PointCloudFromDepth keeping the pixel grid: one
// point per pixel of z in row-major order, the invalid ones with NaN
// coordinates (and black), and the cloud's Width and Height set to z's
// size.
func OrganizedPointCloud(z *Depth, img image.Image, rig *Rig) (*PointCloud, error) {
	if z == nil {
		return nil, errors.New("depth: OrganizedPointCloud: depth is nil")
	}
	pc, err := PointCloudFromDepth(z, img, rig)
	if err != nil {
		return nil, err
	}
	w, h := z.Rect.Dx(), z.Rect.Dy()
	nan := float32(math.NaN())
	grid := make([]Point, w*h)
	k := 0
	for y := range h {
		for x := range w {
			if z.Mask[y*z.Stride+x] == 0 {
				grid[y*w+x] = Point{X: nan, Y: nan, Z: nan}
				continue
			}
			grid[y*w+x] = pc.Points[k]
			k++
		}
	}
	pc.Points, pc.Width, pc.Height = grid, w, h
	return pc, nil
}
