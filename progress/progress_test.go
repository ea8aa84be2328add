package progress

import (
	"bytes"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// fakeClock advances by step at every call.
func fakeClock(step time.Duration) func() time.Time {
	t := time.Unix(0, 0)
	return func() time.Time { t = t.Add(step); return t }
}

// TestLinesNoCarriageReturn: a file or buffer gets one plain line per
// interval, never a carriage return or escape sequence, and the last update
// is always printed.
func TestLinesNoCarriageReturn(t *testing.T) {
	var buf bytes.Buffer
	r := New(&buf, 10, &Options{Unit: "pairs", Label: "scoring", Interval: 3 * time.Second, now: fakeClock(time.Second)})
	for i := 1; i <= 10; i++ {
		r.Update(i, "")
	}
	r.Done()
	out := buf.String()
	if strings.ContainsAny(out, "\r\x1b") {
		t.Fatalf("plain output holds \\r or ESC: %q", out)
	}
	lines := strings.Split(strings.TrimSuffix(out, "\n"), "\n")
	// Updates 1 s apart, interval 3 s: the first, then every third, and the last.
	if len(lines) < 3 || len(lines) > 5 {
		t.Fatalf("%d lines, want 3 to 5:\n%s", len(lines), out)
	}
	if !strings.HasPrefix(lines[len(lines)-1], "scoring: 10/10 pairs 100%") {
		t.Errorf("last line %q", lines[len(lines)-1])
	}
}

// TestETAAfterWarmUp: no ETA during warm-up; after it the moving average
// of a steady 2 items/s gives rate 2 and ETA = left/2.
func TestETAAfterWarmUp(t *testing.T) {
	r := New(&bytes.Buffer{}, 100, &Options{Mode: Off, WarmUp: 2, now: fakeClock(500 * time.Millisecond)})
	r.Update(1, "")
	r.Update(2, "")
	if _, ok := r.ETA(2); ok {
		t.Fatal("ETA during warm-up")
	}
	for i := 3; i <= 20; i++ {
		r.Update(i, "")
	}
	if got := r.Rate(); got < 1.999 || got > 2.001 {
		t.Fatalf("rate %v, want 2", got)
	}
	if eta, ok := r.ETA(20); !ok || eta != 40*time.Second {
		t.Fatalf("ETA %v %v, want 40s", eta, ok)
	}
}

// TestWarmUpIgnoresSlowStart: a first update that includes 60 s of set-up
// does not enter the average (the first ETA of a run was 8x too long).
func TestWarmUpIgnoresSlowStart(t *testing.T) {
	times := []time.Duration{60 * time.Second, time.Second, time.Second, time.Second, time.Second}
	now := time.Unix(0, 0)
	k := 0
	clock := func() time.Time {
		if k > 0 && k <= len(times) {
			now = now.Add(times[k-1])
		}
		k++
		return now
	}
	r := New(&bytes.Buffer{}, 100, &Options{Mode: Off, WarmUp: 1, now: clock})
	for i := 1; i <= 5; i++ {
		r.Update(i, "")
	}
	if got := r.Rate(); got < 0.999 || got > 1.001 {
		t.Fatalf("rate %v, want 1 (the set-up step must not count)", got)
	}
}

// TestBarRedrawsInPlace: bar mode writes \r and clears the line; a note
// lands on a line of its own.
func TestBarRedrawsInPlace(t *testing.T) {
	var buf bytes.Buffer
	r := New(&buf, 4, &Options{Mode: Bar, now: fakeClock(time.Second)})
	r.Update(1, "loss 0.5")
	r.Note("step 1 skipped")
	r.Update(4, "")
	r.Done()
	out := buf.String()
	if !strings.Contains(out, "\r[") || !strings.Contains(out, "loss 0.5") || !strings.Contains(out, "\r\x1b[Kstep 1 skipped\n") {
		t.Fatalf("bar output %q", out)
	}
	if !strings.HasSuffix(out, "\x1b[K\n") {
		t.Errorf("Done does not end the line: %q", out)
	}
}

// TestIsTerminal: a regular file and a buffer are not terminals.
func TestIsTerminal(t *testing.T) {
	f, err := os.Create(filepath.Join(t.TempDir(), "log"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	if IsTerminal(f) || IsTerminal(&bytes.Buffer{}) {
		t.Fatal("file or buffer taken for a terminal")
	}
}
