package progress

import (
	"fmt"
	"io"
	"strings"
	"time"

	"golang.org/x/term"
)

// Mode chooses how a Reporter writes.
type Mode int

const (
	// Auto draws a bar when the writer is a terminal and plain lines
	// otherwise.
	Auto Mode = iota
	// Bar always redraws one line in place.
	Bar
	// Lines always prints plain lines.
	Lines
	// Off prints nothing but notes.
	Off
)

// Options configure a Reporter. A nil *Options means the defaults.
type Options struct {
	// Unit names what is counted, in the plural ("pairs", "steps").
	// Default "items".
	Unit string
	// Label, if not empty, starts every line ("adapting: ...").
	Label string
	// Mode chooses bar or lines. Default Auto.
	Mode Mode
	// Interval is the least time between two plain lines. Default 10 s.
	// A bar is redrawn at most every 200 ms.
	Interval time.Duration
	// WarmUp is the number of updates before the rate counts. Default 2.
	WarmUp int
	// now is the clock; nil means time.Now (tests set it).
	now func() time.Time
}

// Reporter reports the progress of one job of a known number of items.
type Reporter struct {
	w        io.Writer
	total    int
	unit     string
	label    string
	bar      bool
	off      bool
	interval time.Duration
	warmUp   int
	now      func() time.Time

	updates  int
	lastDone int
	lastT    time.Time
	rate     float64 // items per second, moving average; 0 until warm
	shownT   time.Time
	drawn    bool
}

// IsTerminal reports whether w is a terminal (an *os.File, or anything with
// an Fd method, on a terminal device).
func IsTerminal(w io.Writer) bool {
	f, ok := w.(interface{ Fd() uintptr })
	if !ok {
		return false
	}
	// A closed or odd file descriptor is simply not a terminal.
	fd := f.Fd()
	if fd > 1<<30 {
		return false
	}
	return term.IsTerminal(int(fd))
}

// New returns a Reporter of total items written to w.
func New(w io.Writer, total int, opt *Options) *Reporter {
	var o Options
	if opt != nil {
		o = *opt
	}
	r := &Reporter{w: w, total: total, unit: o.Unit, label: o.Label, interval: o.Interval, warmUp: o.WarmUp, now: o.now}
	if r.unit == "" {
		r.unit = "items"
	}
	if r.interval <= 0 {
		r.interval = 10 * time.Second
	}
	if r.warmUp <= 0 {
		r.warmUp = 2
	}
	if r.now == nil {
		r.now = time.Now
	}
	switch o.Mode {
	case Auto:
		r.bar = IsTerminal(w)
	case Bar:
		r.bar = true
	case Off:
		r.off = true
	}
	r.lastT = r.now()
	return r
}

// smoothing is the weight of the newest rate in the moving average.
const smoothing = 0.3

// Update records that done of the items are finished; status, if not
// empty, is shown after the rate (e.g. the current loss or item name).
func (r *Reporter) Update(done int, status string) {
	now := r.now()
	r.updates++
	if dt := now.Sub(r.lastT).Seconds(); dt > 0 && done > r.lastDone {
		inst := float64(done-r.lastDone) / dt
		switch {
		case r.updates <= r.warmUp:
		case r.rate == 0:
			r.rate = inst
		default:
			r.rate = smoothing*inst + (1-smoothing)*r.rate
		}
		r.lastDone, r.lastT = done, now
	}
	if r.off {
		return
	}
	every := r.interval
	if r.bar {
		every = 200 * time.Millisecond
	}
	last := done >= r.total
	if !last && r.updates > 1 && now.Sub(r.shownT) < every {
		return
	}
	r.shownT = now
	r.show(done, status)
}

// Rate returns the moving-average rate in items per second, 0 during the
// warm-up.
func (r *Reporter) Rate() float64 { return r.rate }

// ETA returns the estimated time left, and false during the warm-up.
func (r *Reporter) ETA(done int) (time.Duration, bool) {
	if r.rate <= 0 {
		return 0, false
	}
	left := max(r.total-done, 0)
	return (time.Duration(float64(left)/r.rate*1e9) * time.Nanosecond).Round(time.Second), true
}

const barWidth = 24

func (r *Reporter) show(done int, status string) {
	pct := 0.0
	if r.total > 0 {
		pct = 100 * float64(min(done, r.total)) / float64(r.total)
	}
	var b strings.Builder
	if r.bar {
		fill := int(pct / 100 * barWidth)
		b.WriteString("\r[" + strings.Repeat("=", fill))
		if fill < barWidth {
			b.WriteString(">" + strings.Repeat(" ", barWidth-fill-1))
		}
		b.WriteString("] ")
	}
	if r.label != "" {
		b.WriteString(r.label + ": ")
	}
	fmt.Fprintf(&b, "%*d/%d %s %3.0f%%", len(fmt.Sprint(r.total)), done, r.total, r.unit, pct)
	if r.rate > 0 {
		fmt.Fprintf(&b, "  %.3g %s/s", r.rate, r.unit)
	}
	if eta, ok := r.ETA(done); ok {
		fmt.Fprintf(&b, "  ETA %s", eta)
	} else {
		b.WriteString("  ETA ?")
	}
	if status != "" {
		b.WriteString("  " + status)
	}
	if r.bar {
		b.WriteString("\x1b[K")
		r.drawn = true
	} else {
		b.WriteByte('\n')
	}
	io.WriteString(r.w, b.String())
}

// Note prints s on a line of its own (above the bar on a terminal), whatever
// the mode; the bar is redrawn at the next Update.
func (r *Reporter) Note(s string) {
	if r.drawn {
		io.WriteString(r.w, "\r\x1b[K")
		r.drawn = false
	}
	io.WriteString(r.w, strings.TrimSuffix(s, "\n")+"\n")
	r.shownT = time.Time{}
}

// Done ends the bar's line on a terminal; plain lines need no ending.
func (r *Reporter) Done() {
	if r.drawn {
		io.WriteString(r.w, "\n")
		r.drawn = false
	}
}
