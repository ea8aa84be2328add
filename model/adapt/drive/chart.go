package drive

import (
	"image/color"

	"github.com/parallaxdepth/parallax/chart"
)

// The chart's colours (our own): the Estimators in grey, blue and green
// (then black), roll-backs in red.
var (
	seriesColors  = []color.NRGBA{{120, 120, 120, 255}, {30, 80, 200, 255}, {40, 150, 60, 255}}
	rollbackColor = color.NRGBA{220, 60, 50, 255}
)

// Chart returns a line chart of the EPE of every frame, one line per
// Estimator named by names (in Play's order), with the adapter's
// roll-backs marked.
func (r *Record) Chart(title string, names []string) *chart.Chart {
	ch := &chart.Chart{Title: title, XLabel: "frame", YLabel: "end-point error (px)", MarkName: "roll-back"}
	for k, e := range r.EPE {
		c := color.NRGBA{0, 0, 0, 255}
		if k < len(seriesColors) {
			c = seriesColors[k]
		}
		name := ""
		if k < len(names) {
			name = names[k]
		}
		ch.Series = append(ch.Series, chart.Series{Name: name, X: r.Frame, Y: e, Color: c, Width: 2})
	}
	for _, x := range r.Rollbacks {
		ch.Marks = append(ch.Marks, chart.Mark{X: x, Color: rollbackColor})
	}
	return ch
}
