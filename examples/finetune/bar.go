package main

import (
	"fmt"
	"io"
	"os"
	"strings"
	"time"

	"github.com/parallaxdepth/parallax/model/train"
)

// progressBar draws one status line on a terminal, redrawn in place with
// a carriage return:
//
//	[=========>          ]  460/1000  46%  1.9 steps/s  7.6 pairs/s  loss 0.1834  ETA 4m44s
//
// Notes (skipped steps, collapse warnings) are printed on lines of their
// own above it.
//
// When out is not a terminal (a log file, say) it prints a plain line at
// most every 30 seconds instead.
type progressBar struct {
	out   io.Writer
	quiet bool
	last  time.Time
	drawn bool
	plain bool
}

func newProgressBar(f *os.File, quiet bool) *progressBar {
	b := &progressBar{out: f, quiet: quiet}
	if st, err := f.Stat(); err != nil || st.Mode()&os.ModeCharDevice == 0 {
		b.plain = true
	}
	return b
}

const barWidth = 24

func (b *progressBar) draw(p train.Progress) {
	if b.quiet {
		return
	}
	now := time.Now()
	every := 200 * time.Millisecond
	if b.plain {
		every = 30 * time.Second
	}
	if p.Step > 1 && p.Step < p.Steps && now.Sub(b.last) < every {
		return
	}
	b.last = now
	frac := float64(p.Step) / float64(p.Steps)
	fill := int(frac * barWidth)
	bar := strings.Repeat("=", fill)
	if fill < barWidth {
		bar += ">" + strings.Repeat(" ", barWidth-fill-1)
	}
	eta := "?"
	if p.StepsPerSec > 0 {
		eta = (time.Duration(float64(p.Steps-p.Step)/p.StepsPerSec) * time.Second).Round(time.Second).String()
	}
	loss := "   -   "
	if !p.Skipped {
		loss = fmt.Sprintf("%.4f", p.Terms.Total)
	}
	if b.plain {
		fmt.Fprintf(b.out, "step %d/%d (%.0f%%)  %.2f steps/s  %.1f pairs/s  loss %s  ETA %s\n",
			p.Step, p.Steps, 100*frac, p.StepsPerSec, p.PairsPerSec, loss, eta)
		return
	}
	fmt.Fprintf(b.out, "\r[%s] %*d/%d %3.0f%%  %.2f steps/s  %.1f pairs/s  loss %s  ETA %s \x1b[K",
		bar, len(fmt.Sprint(p.Steps)), p.Step, p.Steps, 100*frac, p.StepsPerSec, p.PairsPerSec, loss, eta)
	b.drawn = true
}

func (b *progressBar) note(s string) {
	if b.drawn && !b.plain {
		fmt.Fprint(b.out, "\r\x1b[K")
	}
	fmt.Fprintln(b.out, s)
	b.last = time.Time{} // redraw the bar at once
}

func (b *progressBar) done() {
	if b.drawn && !b.plain {
		fmt.Fprintln(b.out)
		b.drawn = false
	}
}
