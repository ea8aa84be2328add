package depth

import "slices"

// MapStats summarises the valid pixels of a Map.
type MapStats struct {
	// Valid is the number of valid pixels and Pixels the number of all.
	Valid, Pixels int
	// Min, Median and Max are over the valid pixels (0 when none is valid);
	// the median of an even count is the mean of the middle two.
	Min, Median, Max float32
}

// Stats returns the number, range and median of m's valid values.
func (m *Map) Stats() MapStats {
	s := MapStats{Pixels: m.Rect.Dx() * m.Rect.Dy()}
	v := m.validValues()
	if len(v) == 0 {
		return s
	}
	slices.Sort(v)
	s.Valid, s.Min, s.Max = len(v), v[0], v[len(v)-1]
	s.Median = v[len(v)/2]
	if len(v)%2 == 0 {
		s.Median = (v[len(v)/2-1] + v[len(v)/2]) / 2
	}
	return s
}

// CountBelow returns the number of valid pixels of m whose value is below t.
func (m *Map) CountBelow(t float32) int {
	n := 0
	for _, v := range m.validValues() {
		if v < t {
			n++
		}
	}
	return n
}

func (m *Map) validValues() []float32 {
	var v []float32
	for y := range m.Rect.Dy() {
		for x := range m.Rect.Dx() {
			if i := y*m.Stride + x; m.Mask[i] != 0 {
				v = append(v, m.Pix[i])
			}
		}
	}
	return v
}
