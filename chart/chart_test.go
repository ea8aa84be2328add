package chart

import (
	"image"
	"image/color"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
)

var red = color.NRGBA{200, 0, 0, 255}

// near reports whether a pixel within r of (x, y) has colour c.
func near(img image.Image, x, y, r int, c color.NRGBA) bool {
	for dy := -r; dy <= r; dy++ {
		for dx := -r; dx <= r; dx++ {
			if color.NRGBAModel.Convert(img.At(x+dx, y+dy)) == c {
				return true
			}
		}
	}
	return false
}

// A horizontal line at y = 0.01 on a log axis from 0.001 to 1 lies a
// third of the way up the plot area (log10 0.01 = −2, one decade above
// −3 of three), computed here from the definition of a logarithmic axis,
// not from Layout; a linear mapping would put it at the bottom edge.
func TestLogAxisPlacesValue(t *testing.T) {
	c := &Chart{LogY: true, Y0: 0.001, Y1: 1, X0: 0, X1: 10, Width: 400, Height: 300,
		Series: []Series{{X: []float64{0, 10}, Y: []float64{0.01, 0.01}, Color: red}}}
	path := filepath.Join(t.TempDir(), "c.png")
	if err := c.WritePNG(path); err != nil {
		t.Fatal(err)
	}
	img := testutil.PNG(t, path)
	if img.Bounds() != image.Rect(0, 0, 400, 300) {
		t.Fatalf("size %v, want 400x300", img.Bounds())
	}
	l, err := c.Layout()
	if err != nil {
		t.Fatal(err)
	}
	a := l.Area
	wantRow := a.Max.Y - 1 - int(math.Round((-2.0+3.0)/3.0*float64(a.Dy()-1)))
	col := a.Min.X + a.Dx()/2
	if !near(img, col, wantRow, 0, red) {
		t.Errorf("no curve pixel at (%d, %d), where 0.01 maps on the log axis", col, wantRow)
	}
	linearRow := a.Max.Y - 1 - int(math.Round((0.01-0.001)/(1-0.001)*float64(a.Dy()-1)))
	if near(img, col, linearRow, 1, red) {
		t.Errorf("curve pixel near (%d, %d), where 0.01 would map on a linear axis", col, linearRow)
	}
	if l.Row(0.01) != wantRow || l.Column(5) != col && l.Column(5) != col+1 {
		t.Errorf("Layout: row %d, column %d; want %d, %d", l.Row(0.01), l.Column(5), wantRow, col)
	}
}

// On a linear axis, points, marks and a line land where the definition
// puts them; values a log axis cannot show are skipped there.
func TestLinearAxisPointsAndMarks(t *testing.T) {
	blue, green := color.NRGBA{0, 0, 200, 255}, color.NRGBA{0, 150, 0, 255}
	c := &Chart{X0: 0, X1: 100, Y0: 0, Y1: 4, Width: 500, Height: 300,
		Series: []Series{{Name: "p", X: []float64{25}, Y: []float64{3}, Color: blue, Points: true}},
		Marks:  []Mark{{X: 80, Color: green}}, MarkName: "roll-back"}
	img, err := c.Image()
	if err != nil {
		t.Fatal(err)
	}
	a := image.Rect(marginLeft, marginTop, 500-marginRight, 300-marginBottom)
	px := a.Min.X + int(math.Round(0.25*float64(a.Dx()-1)))
	py := a.Max.Y - 1 - int(math.Round(0.75*float64(a.Dy()-1)))
	if !near(img, px, py, 0, blue) {
		t.Errorf("no marker at (%d, %d)", px, py)
	}
	mx := a.Min.X + int(math.Round(0.8*float64(a.Dx()-1)))
	if !near(img, mx, a.Max.Y-10, 0, green) {
		t.Errorf("no mark at column %d", mx)
	}
	c.LogY, c.Y0, c.Y1 = true, 0, 0
	c.Series[0].Y[0] = -1
	if _, err := c.Image(); err == nil || !strings.Contains(err.Error(), "no drawable point") {
		t.Errorf("a negative value alone on a log axis: %v", err)
	}
}

// Malformed charts are errors that say what is wrong.
func TestChartErrors(t *testing.T) {
	for _, tc := range []struct {
		c    Chart
		want string
	}{
		{Chart{Series: []Series{{X: []float64{1, 2}, Y: []float64{1}}}}, "2 x and 1 y"},
		{Chart{Series: []Series{{X: []float64{math.NaN()}, Y: []float64{1}}}}, "no drawable point"},
		{Chart{}, "no drawable point"},
		{Chart{Width: 50, Height: 50, Series: []Series{{X: []float64{1}, Y: []float64{1}}}}, "size 50x50"},
		{Chart{X0: 5, X1: 1, Series: []Series{{X: []float64{1}, Y: []float64{1}}}}, "axis ranges"},
	} {
		if _, err := tc.c.Image(); err == nil || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%+v: error %v, want one containing %q", tc.c, err, tc.want)
		}
	}
}

// Ticks: round values inside the range (hand-listed).
func TestTicks(t *testing.T) {
	got := linearTicks(0, 1, 5)
	want := []string{"0", "0.2", "0.4", "0.6", "0.8", "1"}
	if len(got) != len(want) {
		t.Fatalf("linear ticks %v, want %v", got, want)
	}
	for i := range want {
		if formatTick(got[i]) != want[i] {
			t.Errorf("tick %d: %v (%s), want %s", i, got[i], formatTick(got[i]), want[i])
		}
	}
	if s := formatTick(0.1 + 0.2); s != "0.3" {
		t.Errorf("formatTick(0.1+0.2) = %q", s)
	}
	lt := logTicks(0.001, 1)
	if len(lt) != 4 || formatTick(lt[0]) != "0.001" || formatTick(lt[3]) != "1" {
		t.Errorf("log ticks over 3 decades: %v", lt)
	}
	if lt := logTicks(0.01, 0.3); len(lt) != 5 { // 0.01 0.02 0.05 0.1 0.2
		t.Errorf("log ticks over 1.5 decades: %v", lt)
	}
}
