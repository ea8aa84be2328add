package train

import (
	"bytes"
	"encoding/csv"
	"errors"
	"fmt"
	"image/color"
	"math"
	"os"
	"slices"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/chart"
	"github.com/parallaxdepth/parallax/loss"
)

// logHeader names the CSV columns of a StepLog; the terms are the weighted
// loss terms of the objective (see loss.Terms).
var logHeader = []string{"step", "epoch", "batch", "learning_rate", "appearance", "smoothness", "consistency", "total",
	"skipped", "disparity_spread", "mean_disparity_px", "steps_per_s", "pairs_per_s", "elapsed_s", "val_total"}

// oldLogFields is the number of columns of logs written before val_total.
const oldLogFields = 14

type logRow struct {
	step         int
	epoch, batch int
	rate         float64
	terms        loss.Terms
	skipped      bool
	spread, mpx  float64
	sps, pps     float64
	elapsed      float64
	val          float64 // the held-out total, NaN where not scored
}

// StepLog keeps one row per training step (from Progress) and writes them
// as CSV, atomically: step, epoch, batch, learning_rate, the weighted loss
// terms, skipped (0 or 1), disparity_spread, mean_disparity_px,
// steps_per_s, pairs_per_s, elapsed_s and val_total (the held-out
// objective, Progress.Validation.Total, empty at steps that did not score
// it). The zero value is an empty log for Path.
type StepLog struct {
	// Path is the CSV file.
	Path string
	// Plot, if set, is the loss-curve PNG that Save writes beside the log
	// (see Chart), once the log has a step that was not skipped.
	Plot string
	rows []logRow
}

// Add appends the row of one step.
func (l *StepLog) Add(p Progress) {
	val := math.NaN()
	if p.Validated {
		val = p.Validation.Total
	}
	l.rows = append(l.rows, logRow{p.Step, p.Epoch, p.Batch, p.Rate, p.Terms, p.Skipped, p.Spread, p.MeanDisparity,
		p.StepsPerSec, p.PairsPerSec, p.Elapsed.Seconds(), val})
}

// Load reads the log of an interrupted run from Path, keeping the rows up
// to step (a resumed run continues from its checkpoint's step). A missing
// file is an empty log. Logs written before the val_total column read as
// logs without held-out scores.
func (l *StepLog) Load(step int) error {
	b, err := os.ReadFile(l.Path)
	if os.IsNotExist(err) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("train: log: %w", err)
	}
	recs, err := csv.NewReader(bytes.NewReader(b)).ReadAll()
	if err != nil {
		return fmt.Errorf("train: log %s: %w", l.Path, err)
	}
	for i, r := range recs {
		if i == 0 {
			continue
		}
		if len(r) != len(logHeader) && len(r) != oldLogFields {
			return fmt.Errorf("train: log %s line %d: %d fields, want %d", l.Path, i+1, len(r), len(logHeader))
		}
		v := [15]float64{14: math.NaN()}
		for k, s := range r {
			if k == 8 || (k == 14 && s == "") {
				continue
			}
			if v[k], err = strconv.ParseFloat(s, 64); err != nil {
				return fmt.Errorf("train: log %s line %d: %v", l.Path, i+1, err)
			}
		}
		if int(v[0]) > step {
			break
		}
		l.rows = append(l.rows, logRow{int(v[0]), int(v[1]), int(v[2]), v[3],
			loss.Terms{Appearance: v[4], Smoothness: v[5], Consistency: v[6], Total: v[7]},
			r[8] == "1", v[9], v[10], v[11], v[12], v[13], v[14]})
	}
	return nil
}

// Save writes the log to Path atomically, and the curve to Plot if set.
func (l *StepLog) Save() error {
	var buf bytes.Buffer
	w := csv.NewWriter(&buf)
	w.Write(logHeader)
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', 8, 64) }
	for _, r := range l.rows {
		skip := "0"
		if r.skipped {
			skip = "1"
		}
		val := ""
		if !math.IsNaN(r.val) {
			val = g(r.val)
		}
		w.Write([]string{strconv.Itoa(r.step), strconv.Itoa(r.epoch), strconv.Itoa(r.batch), g(r.rate),
			g(r.terms.Appearance), g(r.terms.Smoothness), g(r.terms.Consistency), g(r.terms.Total),
			skip, g(r.spread), g(r.mpx), g(r.sps), g(r.pps), g(r.elapsed), val})
	}
	w.Flush()
	if err := writeOutput(l.Path, "train: log", buf.Bytes()); err != nil {
		return err
	}
	if l.Plot != "" && slices.ContainsFunc(l.rows, func(r logRow) bool { return !r.skipped }) {
		return l.SavePlot(l.Plot)
	}
	return nil
}

// Len returns the number of rows.
func (l *StepLog) Len() int { return len(l.rows) }

// Window returns the mean terms of the first and of the last n steps that
// were not skipped.
func (l *StepLog) Window(n int) (first, last loss.Terms) {
	var ok []loss.Terms
	for _, r := range l.rows {
		if !r.skipped {
			ok = append(ok, r.terms)
		}
	}
	mean := func(ts []loss.Terms) loss.Terms {
		var m loss.Terms
		for _, t := range ts {
			m.Appearance += t.Appearance / float64(len(ts))
			m.Smoothness += t.Smoothness / float64(len(ts))
			m.Consistency += t.Consistency / float64(len(ts))
			m.Total += t.Total / float64(len(ts))
		}
		return m
	}
	n = min(n, len(ok))
	if n == 0 {
		return
	}
	return mean(ok[:n]), mean(ok[len(ok)-n:])
}

// summary writes a table of the mean weighted loss terms of the first and
// of the last n steps that were not skipped (Window) to b.
func (l *StepLog) summary(b *strings.Builder, n int) {
	first, last := l.Window(n)
	fmt.Fprintf(b, "loss (mean of the first and last %d steps)   start      end\n", min(n, l.Len()))
	for _, t := range []struct {
		name     string
		from, to float64
	}{{"appearance", first.Appearance, last.Appearance}, {"smoothness", first.Smoothness, last.Smoothness},
		{"consistency", first.Consistency, last.Consistency}, {"total", first.Total, last.Total}} {
		fmt.Fprintf(b, "  %-42s %9.5f %9.5f\n", t.name, t.from, t.to)
	}
}

// SavePlot draws the log's weighted loss terms against the step (see
// Chart) and writes the PNG to path atomically.
func (l *StepLog) SavePlot(path string) error {
	c, err := l.Chart()
	if err != nil {
		return err
	}
	if err := c.WritePNG(path); err != nil {
		return fmt.Errorf("train: plot: %w", err)
	}
	return nil
}

// Chart returns the loss-curve chart of the log: the weighted terms and
// their total against the step on a logarithmic axis, each as a pale line
// of every step under its smoothed line, and the held-out total as points
// where the log has it. The smoothing is an exponential moving average,
// s₁ = x₁, sₖ = sₖ₋₁ + (xₖ − sₖ₋₁)/τ, over the steps that were not
// skipped, with the time constant τ = max(5, n/100) steps for a log of n
// such steps (SmoothingSteps). Values that are not positive (a log axis
// cannot show them) are left out.
func (l *StepLog) Chart() (*chart.Chart, error) {
	var ok []logRow
	for _, r := range l.rows {
		if !r.skipped {
			ok = append(ok, r)
		}
	}
	if len(ok) == 0 {
		return nil, errors.New("train: plot: the log has no step that was not skipped")
	}
	tau := SmoothingSteps(len(ok))
	c := &chart.Chart{
		Title:  fmt.Sprintf("training loss, log scale (lines: moving average over %d steps; pale: each step)", tau),
		XLabel: "step", YLabel: "weighted loss term", LogY: true,
	}
	x := make([]float64, len(ok))
	for i, r := range ok {
		x[i] = float64(r.step)
	}
	var smooth []chart.Series
	for _, t := range plotTerms {
		y := make([]float64, len(ok))
		for i, r := range ok {
			y[i] = t.get(r.terms)
		}
		c.Series = append(c.Series, chart.Series{X: x, Y: y, Color: pale(t.col)})
		smooth = append(smooth, chart.Series{Name: t.name, X: x, Y: MovingAverage(y, tau), Color: t.col, Width: 2})
	}
	c.Series = append(c.Series, smooth...)
	var vx, vy []float64
	for _, r := range l.rows {
		if !math.IsNaN(r.val) {
			vx, vy = append(vx, float64(r.step)), append(vy, r.val)
		}
	}
	if len(vx) > 0 {
		c.Series = append(c.Series, chart.Series{Name: "held-out total", X: vx, Y: vy, Color: valColor, Width: 2, Points: true})
	}
	return c, nil
}

// The curves' colours (our own choice): the total in dark blue, the
// terms in brick red, teal and violet, held-out points in amber.
var (
	plotTerms = []struct {
		name string
		get  func(loss.Terms) float64
		col  color.NRGBA
	}{
		{"total", func(t loss.Terms) float64 { return t.Total }, color.NRGBA{30, 50, 120, 255}},
		{"appearance", func(t loss.Terms) float64 { return t.Appearance }, color.NRGBA{180, 60, 40, 255}},
		{"consistency", func(t loss.Terms) float64 { return t.Consistency }, color.NRGBA{20, 130, 120, 255}},
		{"smoothness", func(t loss.Terms) float64 { return t.Smoothness }, color.NRGBA{120, 70, 160, 255}},
	}
	valColor = color.NRGBA{230, 150, 0, 255}
)

// pale mixes c with three parts of white.
func pale(c color.NRGBA) color.NRGBA {
	return color.NRGBA{uint8((int(c.R) + 3*255) / 4), uint8((int(c.G) + 3*255) / 4), uint8((int(c.B) + 3*255) / 4), 255}
}

// SmoothingSteps returns the time constant, in steps, of the loss curve's
// moving average for a log of n steps: 1 % of them, at least 5.
func SmoothingSteps(n int) int { return max(5, n/100) }

// MovingAverage returns the exponential moving average of v with time
// constant tau (≥ 1): s₀ = v₀, sₖ = sₖ₋₁ + (vₖ − sₖ₋₁)/tau. A value that
// is not finite is skipped (its average is the previous one's, or NaN
// before the first finite value).
func MovingAverage(v []float64, tau int) []float64 {
	s := make([]float64, len(v))
	acc, have := math.NaN(), false
	for i, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			if !have {
				acc, have = x, true
			} else {
				acc += (x - acc) / float64(max(tau, 1))
			}
		}
		s[i] = acc
	}
	return s
}

// PlotLog reads the CSV log of a training run (as StepLog.Save writes it,
// e.g. training/default/log.csv) and writes its loss-curve PNG to png.
func PlotLog(csvPath, png string) error {
	l := &StepLog{Path: csvPath}
	if _, err := os.Stat(csvPath); err != nil {
		return fmt.Errorf("train: log: %w", err)
	}
	if err := l.Load(math.MaxInt); err != nil {
		return err
	}
	return l.SavePlot(png)
}
