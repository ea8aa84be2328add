package train

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"image/color"
	"math"
	"os"
	"strconv"
	"strings"

	"github.com/parallaxdepth/parallax/internal/atomicfile"
	"github.com/parallaxdepth/parallax/loss"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// logHeader names the CSV columns of a StepLog; the terms are the weighted
// loss terms of the objective (see loss.Terms).
var logHeader = []string{"step", "epoch", "batch", "learning_rate", "appearance", "smoothness", "consistency", "total",
	"skipped", "disparity_spread", "mean_disparity_px", "steps_per_s", "pairs_per_s", "elapsed_s"}

type logRow struct {
	step         int
	epoch, batch int
	rate         float64
	terms        loss.Terms
	skipped      bool
	spread, mpx  float64
	sps, pps     float64
	elapsed      float64
}

// StepLog keeps one row per training step (from Progress) and writes them
// as CSV, atomically: step, epoch, batch, learning_rate, the weighted loss
// terms, skipped (0 or 1), disparity_spread, mean_disparity_px,
// steps_per_s, pairs_per_s, elapsed_s. The zero value is an empty log for
// Path.
type StepLog struct {
	// Path is the CSV file.
	Path string
	rows []logRow
}

// Add appends the row of one step.
func (l *StepLog) Add(p Progress) {
	l.rows = append(l.rows, logRow{p.Step, p.Epoch, p.Batch, p.Rate, p.Terms, p.Skipped, p.Spread, p.MeanDisparity,
		p.StepsPerSec, p.PairsPerSec, p.Elapsed.Seconds()})
}

// Load reads the log of an interrupted run from Path, keeping the rows up
// to step (a resumed run continues from its checkpoint's step). A missing
// file is an empty log.
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
		if len(r) != len(logHeader) {
			return fmt.Errorf("train: log %s line %d: %d fields, want %d", l.Path, i+1, len(r), len(logHeader))
		}
		var v [14]float64
		for k, s := range r {
			if k == 8 {
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
			r[8] == "1", v[9], v[10], v[11], v[12], v[13]})
	}
	return nil
}

// Save writes the log to Path atomically.
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
		w.Write([]string{strconv.Itoa(r.step), strconv.Itoa(r.epoch), strconv.Itoa(r.batch), g(r.rate),
			g(r.terms.Appearance), g(r.terms.Smoothness), g(r.terms.Consistency), g(r.terms.Total),
			skip, g(r.spread), g(r.mpx), g(r.sps), g(r.pps), g(r.elapsed)})
	}
	w.Flush()
	return atomicfile.WriteBytes(l.Path, "train: log", buf.Bytes())
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

// SavePlot draws the log's weighted loss terms against the step, one line
// per term, and writes the PNG to path atomically.
func (l *StepLog) SavePlot(path string) error {
	rows := l.rows
	p := plot.New()
	p.Title.Text = "training loss"
	p.X.Label.Text = "step"
	p.Y.Label.Text = "weighted loss term"
	p.Add(plotter.NewGrid())
	series := []struct {
		name string
		get  func(loss.Terms) float64
		col  color.RGBA
	}{
		{"total", func(t loss.Terms) float64 { return t.Total }, color.RGBA{20, 20, 20, 255}},
		{"appearance", func(t loss.Terms) float64 { return t.Appearance }, color.RGBA{200, 70, 40, 255}},
		{"consistency", func(t loss.Terms) float64 { return t.Consistency }, color.RGBA{40, 120, 200, 255}},
		{"smoothness", func(t loss.Terms) float64 { return t.Smoothness }, color.RGBA{60, 160, 70, 255}},
	}
	for _, s := range series {
		var xy plotter.XYs
		for _, r := range rows {
			if v := s.get(r.terms); !r.skipped && !math.IsNaN(v) && !math.IsInf(v, 0) {
				xy = append(xy, plotter.XY{X: float64(r.step), Y: v})
			}
		}
		if len(xy) == 0 {
			continue
		}
		line, err := plotter.NewLine(xy)
		if err != nil {
			return fmt.Errorf("train: plot: %w", err)
		}
		line.Color = s.col
		line.Width = vg.Points(1)
		p.Add(line)
		p.Legend.Add(s.name, line)
	}
	p.Legend.Top = true
	wt, err := p.WriterTo(8*vg.Inch, 4.5*vg.Inch, "png")
	if err != nil {
		return fmt.Errorf("train: plot: %w", err)
	}
	var buf bytes.Buffer
	if _, err := wt.WriteTo(&buf); err != nil {
		return fmt.Errorf("train: plot: %w", err)
	}
	return atomicfile.WriteBytes(path, "train: plot", buf.Bytes())
}
