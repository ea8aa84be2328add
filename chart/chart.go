// Package chart draws the project's line charts (training loss curves,
// online adaptation runs) as images, in plain Go: axes with ticks and
// labels (internal/label), a linear or logarithmic vertical axis, lines,
// point markers and vertical event marks, and a legend. It knows nothing
// of training: callers hand it series of (x, y) values.
//
// Coordinates: the plot area is Layout.Area (pixels, inclusive of its
// edges: Min is the top-left pixel, Max−(1, 1) the bottom-right one). A
// value x maps to column Area.Min.X + (x−X0)/(X1−X0)·(Area.Dx()−1) and y
// to row Area.Max.Y−1 − t·(Area.Dy()−1), with t = (y−Y0)/(Y1−Y0) on a
// linear axis and (log10 y − log10 Y0)/(log10 Y1 − log10 Y0) on a
// logarithmic one, both rounded to the nearest pixel.
package chart

import (
	"bytes"
	"errors"
	"fmt"
	"image"
	"image/color"
	"image/draw"
	"image/png"
	"math"
	"strconv"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
	"github.com/parallaxdepth/parallax/internal/label"
)

// Series is one set of values to draw.
type Series struct {
	// Name is shown in the legend; an empty name is left out of it.
	Name string
	// X and Y are the values, of equal length. Points whose x or y is not
	// finite, or whose y is not positive on a logarithmic axis, are not
	// drawn (a line breaks there).
	X, Y []float64
	// Color is the colour of the line or the markers.
	Color color.NRGBA
	// Width is the line width in pixels; 0 means 1.
	Width int
	// Points draws a marker (a filled square of 2·Width+3 pixels) at every
	// point instead of a line.
	Points bool
}

// Mark is a vertical line at X across the plot area, for events such as
// a roll-back.
type Mark struct {
	X     float64
	Color color.NRGBA
}

// Chart is a line chart. The zero value of every field but Series is
// valid.
type Chart struct {
	// Title is drawn above the plot area; XLabel under the x axis; YLabel
	// reading upwards left of the y axis.
	Title, XLabel, YLabel string
	// LogY makes the vertical axis logarithmic (base 10).
	LogY bool
	// Width and Height are the image's size; 0 means 800 by 450.
	Width, Height int
	// Series are drawn in order, later ones over earlier ones.
	Series []Series
	// Marks are drawn under the series; MarkName, if set, names them in
	// the legend.
	Marks    []Mark
	MarkName string
	// X0, X1 and Y0, Y1 fix the axes' ranges; where both ends of an axis
	// are 0 the range follows the data (a logarithmic axis then spans
	// whole or half decades, a linear one is padded by 5 %).
	X0, X1, Y0, Y1 float64
}

// Layout is where a Chart's values land in its image.
type Layout struct {
	// Area is the plot area in pixels.
	Area image.Rectangle
	// X0, X1 and Y0, Y1 are the values at the area's left and right, and
	// bottom and top edges.
	X0, X1, Y0, Y1 float64
	LogY           bool
}

// The chart's colours, our own: a white page, dark grey ink, light grid.
var (
	paper = color.NRGBA{255, 255, 255, 255}
	ink   = color.NRGBA{40, 40, 48, 255}
	grid  = color.NRGBA{228, 228, 232, 255}
)

// Margins around the plot area, in pixels: room for the title, the tick
// labels and the axis titles.
const (
	marginLeft   = 78
	marginRight  = 16
	marginTop    = 30
	marginBottom = 44
)

// Column returns the image column of value x.
func (l Layout) Column(x float64) int {
	t := (x - l.X0) / (l.X1 - l.X0)
	return l.Area.Min.X + int(math.Round(t*float64(l.Area.Dx()-1)))
}

// Row returns the image row of value y (on a logarithmic axis y must be
// positive).
func (l Layout) Row(y float64) int {
	var t float64
	if l.LogY {
		t = (math.Log10(y) - math.Log10(l.Y0)) / (math.Log10(l.Y1) - math.Log10(l.Y0))
	} else {
		t = (y - l.Y0) / (l.Y1 - l.Y0)
	}
	return l.Area.Max.Y - 1 - int(math.Round(t*float64(l.Area.Dy()-1)))
}

// drawable reports whether a point can be placed on the axes.
func (c *Chart) drawable(x, y float64) bool {
	ok := !math.IsNaN(x) && !math.IsInf(x, 0) && !math.IsNaN(y) && !math.IsInf(y, 0)
	return ok && (!c.LogY || y > 0)
}

// Layout returns where the chart's values land, or an error if there is
// nothing to draw, the series are malformed or the size leaves no plot
// area.
func (c *Chart) Layout() (Layout, error) {
	w, h := c.Width, c.Height
	if w == 0 && h == 0 {
		w, h = 800, 450
	}
	if w < marginLeft+marginRight+40 || h < marginTop+marginBottom+40 || w > 8192 || h > 8192 {
		return Layout{}, fmt.Errorf("chart: size %dx%d is outside %dx%d … 8192x8192", w, h, marginLeft+marginRight+40, marginTop+marginBottom+40)
	}
	l := Layout{Area: image.Rect(marginLeft, marginTop, w-marginRight, h-marginBottom), LogY: c.LogY}
	xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for i, s := range c.Series {
		if len(s.X) != len(s.Y) {
			return Layout{}, fmt.Errorf("chart: series %d (%q) has %d x and %d y values", i, s.Name, len(s.X), len(s.Y))
		}
		for k, x := range s.X {
			if y := s.Y[k]; c.drawable(x, y) {
				xmin, xmax = math.Min(xmin, x), math.Max(xmax, x)
				ymin, ymax = math.Min(ymin, y), math.Max(ymax, y)
			}
		}
	}
	if xmin > xmax {
		return Layout{}, errors.New("chart: no drawable point (every value is missing, not finite or, on a log axis, not positive)")
	}
	l.X0, l.X1, l.Y0, l.Y1 = xmin, xmax, ymin, ymax
	if c.X0 != 0 || c.X1 != 0 {
		l.X0, l.X1 = c.X0, c.X1
	} else if l.X0 == l.X1 {
		l.X0, l.X1 = l.X0-1, l.X1+1
	}
	if c.Y0 != 0 || c.Y1 != 0 {
		l.Y0, l.Y1 = c.Y0, c.Y1
	} else if c.LogY {
		// Whole or half decades: 1, 3.16 (10^0.5), 10 …
		l.Y0 = math.Pow(10, math.Floor(2*math.Log10(ymin))/2)
		l.Y1 = math.Pow(10, math.Ceil(2*math.Log10(ymax))/2)
		if l.Y0 == l.Y1 {
			l.Y0, l.Y1 = l.Y0/math.Sqrt(10), l.Y1*math.Sqrt(10)
		}
	} else {
		pad := 0.05 * (ymax - ymin)
		if pad == 0 {
			pad = math.Max(math.Abs(ymax)*0.05, 1)
		}
		l.Y0, l.Y1 = ymin-pad, ymax+pad
	}
	if !(l.X1 > l.X0) || !(l.Y1 > l.Y0) || (c.LogY && !(l.Y0 > 0)) {
		return Layout{}, fmt.Errorf("chart: axis ranges x %g…%g, y %g…%g are empty or, on a log axis, not positive", l.X0, l.X1, l.Y0, l.Y1)
	}
	return l, nil
}

// Image draws the chart.
func (c *Chart) Image() (*image.NRGBA, error) {
	l, err := c.Layout()
	if err != nil {
		return nil, err
	}
	w, h := l.Area.Max.X+marginRight, l.Area.Max.Y+marginBottom
	img := image.NewNRGBA(image.Rect(0, 0, w, h))
	draw.Draw(img, img.Rect, image.NewUniform(paper), image.Point{}, draw.Src)
	a := l.Area
	c.drawAxes(img, l)
	for _, m := range c.Marks {
		if x := l.Column(m.X); m.X >= l.X0 && m.X <= l.X1 {
			fillRect(img, image.Rect(x, a.Min.Y, x+1, a.Max.Y), m.Color)
		}
	}
	for _, s := range c.Series {
		c.drawSeries(img, l, s)
	}
	// The frame last, over lines that touch the edges.
	fillRect(img, image.Rect(a.Min.X-1, a.Min.Y-1, a.Max.X+1, a.Min.Y), ink)
	fillRect(img, image.Rect(a.Min.X-1, a.Max.Y, a.Max.X+1, a.Max.Y+1), ink)
	fillRect(img, image.Rect(a.Min.X-1, a.Min.Y-1, a.Min.X, a.Max.Y+1), ink)
	fillRect(img, image.Rect(a.Max.X, a.Min.Y-1, a.Max.X+1, a.Max.Y+1), ink)
	c.drawLegend(img, l)
	if c.Title != "" {
		label.Draw(img, c.Title, (a.Min.X+a.Max.X)/2, marginTop-10, label.Center, ink)
	}
	if c.XLabel != "" {
		label.Draw(img, c.XLabel, (a.Min.X+a.Max.X)/2, h-8, label.Center, ink)
	}
	if c.YLabel != "" {
		label.DrawUp(img, c.YLabel, 6, (a.Min.Y+a.Max.Y)/2, ink)
	}
	return img, nil
}

// WritePNG draws the chart and writes it to path atomically.
func (c *Chart) WritePNG(path string) error {
	img, err := c.Image()
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		return fmt.Errorf("chart: %w", err)
	}
	return atomicfile.WriteBytes(path, "chart", buf.Bytes())
}

// drawAxes draws the grid, the ticks and their labels.
func (c *Chart) drawAxes(img *image.NRGBA, l Layout) {
	a := l.Area
	for _, t := range linearTicks(l.X0, l.X1, max(2, a.Dx()/90)) {
		x := l.Column(t)
		fillRect(img, image.Rect(x, a.Min.Y, x+1, a.Max.Y), grid)
		fillRect(img, image.Rect(x, a.Max.Y, x+1, a.Max.Y+5), ink)
		label.Draw(img, formatTick(t), x, a.Max.Y+5+label.Height, label.Center, ink)
	}
	var yt []float64
	if l.LogY {
		yt = logTicks(l.Y0, l.Y1)
	} else {
		yt = linearTicks(l.Y0, l.Y1, max(2, a.Dy()/50))
	}
	for _, t := range yt {
		y := l.Row(t)
		fillRect(img, image.Rect(a.Min.X, y, a.Max.X, y+1), grid)
		fillRect(img, image.Rect(a.Min.X-5, y, a.Min.X, y+1), ink)
		label.Draw(img, formatTick(t), a.Min.X-8, y+label.Face.Ascent/2, label.Right, ink)
	}
}

// drawSeries draws one series, clipped to the plot area.
func (c *Chart) drawSeries(img *image.NRGBA, l Layout, s Series) {
	wd := max(s.Width, 1)
	dst := img.SubImage(l.Area).(*image.NRGBA)
	px, py, have := 0, 0, false
	for k, x := range s.X {
		y := s.Y[k]
		if !c.drawable(x, y) {
			have = false
			continue
		}
		cx, cy := l.Column(x), l.Row(y)
		if s.Points {
			r := wd + 1
			fillRect(dst, image.Rect(cx-r, cy-r, cx+r+1, cy+r+1), s.Color)
			continue
		}
		if have {
			line(dst, px, py, cx, cy, wd, s.Color)
		} else {
			line(dst, cx, cy, cx, cy, wd, s.Color)
		}
		px, py, have = cx, cy, true
	}
}

// drawLegend lists the named series (and the marks) in the plot area's
// top right corner.
func (c *Chart) drawLegend(img *image.NRGBA, l Layout) {
	type entry struct {
		name   string
		col    color.NRGBA
		points bool
		mark   bool
	}
	var es []entry
	for _, s := range c.Series {
		if s.Name != "" {
			es = append(es, entry{s.Name, s.Color, s.Points, false})
		}
	}
	if c.MarkName != "" && len(c.Marks) > 0 {
		es = append(es, entry{c.MarkName, c.Marks[0].Color, false, true})
	}
	if len(es) == 0 {
		return
	}
	wmax := 0
	for _, e := range es {
		wmax = max(wmax, label.Width(e.name))
	}
	const swatch, pad, lineH = 18, 6, 16
	box := image.Rect(l.Area.Max.X-wmax-swatch-3*pad, l.Area.Min.Y+pad, l.Area.Max.X-pad, l.Area.Min.Y+pad+len(es)*lineH+pad)
	fillRect(img, box, color.NRGBA{255, 255, 255, 230})
	for i, e := range es {
		y := box.Min.Y + pad + i*lineH + lineH/2
		x0 := box.Min.X + pad
		switch {
		case e.points:
			fillRect(img, image.Rect(x0+swatch/2-2, y-2, x0+swatch/2+3, y+3), e.col)
		case e.mark:
			fillRect(img, image.Rect(x0+swatch/2, y-6, x0+swatch/2+1, y+7), e.col)
		default:
			fillRect(img, image.Rect(x0, y-1, x0+swatch, y+1), e.col)
		}
		label.Draw(img, e.name, x0+swatch+pad, y+label.Face.Ascent/2, label.Left, ink)
	}
}

// fillRect fills r ∩ dst's bounds with col (opaque, or blended over if
// col is translucent).
func fillRect(dst *image.NRGBA, r image.Rectangle, col color.NRGBA) {
	op := draw.Src
	if col.A != 255 {
		op = draw.Over
	}
	draw.Draw(dst, r.Intersect(dst.Rect), image.NewUniform(col), image.Point{}, op)
}

// line draws a segment from (x0, y0) to (x1, y1), wd pixels thick
// (Bresenham's algorithm with a square brush).
func line(dst *image.NRGBA, x0, y0, x1, y1, wd int, col color.NRGBA) {
	dx, dy := abs(x1-x0), -abs(y1-y0)
	sx, sy := sign(x1-x0), sign(y1-y0)
	e := dx + dy
	lo, hi := -(wd-1)/2, wd/2
	for {
		fillRect(dst, image.Rect(x0+lo, y0+lo, x0+hi+1, y0+hi+1), col)
		if x0 == x1 && y0 == y1 {
			return
		}
		if e2 := 2 * e; e2 >= dy {
			e += dy
			x0 += sx
		} else {
			e += dx
			y0 += sy
		}
	}
}

func abs(v int) int { return max(v, -v) }

func sign(v int) int {
	switch {
	case v > 0:
		return 1
	case v < 0:
		return -1
	}
	return 0
}

// linearTicks returns round values (1, 2 or 5 times a power of ten apart)
// within [lo, hi], about n of them.
func linearTicks(lo, hi float64, n int) []float64 {
	raw := (hi - lo) / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	step := p
	for _, m := range []float64{1, 2, 5, 10} {
		if step = m * p; step >= raw {
			break
		}
	}
	var ts []float64
	for t := math.Ceil(lo/step) * step; t <= hi+step*1e-9; t += step {
		ts = append(ts, math.Round(t/step)*step)
	}
	return ts
}

// logTicks returns the powers of ten within [lo, hi], and 2 and 5 times
// them when the range spans fewer than three decades.
func logTicks(lo, hi float64) []float64 {
	mults := []float64{1}
	if math.Log10(hi/lo) < 3 {
		mults = []float64{1, 2, 5}
	}
	var ts []float64
	for e := math.Floor(math.Log10(lo)); e <= math.Ceil(math.Log10(hi)); e++ {
		for _, m := range mults {
			t := m * math.Pow(10, e)
			if t >= lo*(1-1e-9) && t <= hi*(1+1e-9) {
				ts = append(ts, t)
			}
		}
	}
	return ts
}

// formatTick writes a tick value briefly, to 6 significant digits (which
// also hides the rounding of sums of steps): 0.001, 0.3, 20000, 1e-05.
func formatTick(v float64) string {
	if math.Abs(v) < 1e-12 {
		return "0"
	}
	return strconv.FormatFloat(v, 'g', 6, 64)
}
