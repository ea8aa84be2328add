package main

import (
	"bytes"
	"fmt"
	"os"
	"runtime"
	"runtime/metrics"
	"strconv"
	"time"

	"github.com/parallaxdepth/parallax/model/adapt"
)

// rssLogger appends one CSV line per interval to a file: the elapsed time,
// the resident set size, the Go heap in use (spans holding objects, live
// or not yet collected) and the live heap marked by the last garbage
// collection (MB), the CPU time the garbage collector has taken (s), and the
// frames, steps, swaps and roll-backs so far. Each line is written and synced as
// it comes, so a run that is killed keeps its log.
type rssLogger struct {
	f        *os.File
	ad       *adapt.Adapter
	began    time.Time
	every    time.Duration
	next     time.Time
	lastSeen int
}

func newRSSLogger(path string, every time.Duration, ad *adapt.Adapter) (*rssLogger, error) {
	f, err := os.OpenFile(path, os.O_CREATE|os.O_WRONLY|os.O_TRUNC, 0o644)
	if err != nil {
		return nil, fmt.Errorf("adaptdrive: -rss-log: %w", err)
	}
	l := &rssLogger{f: f, ad: ad, began: time.Now(), every: every}
	l.next = l.began
	if _, err := fmt.Fprintln(f, "elapsed_s,rss_mb,heap_mb,live_heap_mb,gc_cpu_s,frames,steps,swaps,rollbacks"); err != nil {
		f.Close()
		return nil, fmt.Errorf("adaptdrive: -rss-log: %w", err)
	}
	return l, nil
}

// Tick writes a line if the interval has passed; frames is the number of
// frames played so far.
func (l *rssLogger) Tick(frames int) error {
	l.lastSeen = frames
	if time.Now().Before(l.next) {
		return nil
	}
	l.next = l.next.Add(l.every)
	return l.write(frames)
}

// Final writes the last line.
func (l *rssLogger) Final() error { return l.write(l.lastSeen + 1) }

func (l *rssLogger) write(frames int) error {
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	rss, err := residentMB()
	if err != nil {
		return err
	}
	gc := []metrics.Sample{{Name: "/gc/heap/live:bytes"}, {Name: "/cpu/classes/gc/total:cpu-seconds"}}
	metrics.Read(gc)
	var liveMB float64
	if gc[0].Value.Kind() == metrics.KindUint64 {
		liveMB = float64(gc[0].Value.Uint64()) / 1e6
	}
	if gc[1].Value.Kind() != metrics.KindFloat64 {
		return fmt.Errorf("adaptdrive: -rss-log: the runtime reports no garbage collector CPU time")
	}
	s := l.ad.Status()
	_, err = fmt.Fprintf(l.f, "%.0f,%.1f,%.1f,%.1f,%.1f,%d,%d,%d,%d\n", time.Since(l.began).Seconds(), rss, float64(ms.HeapInuse)/1e6, liveMB, gc[1].Value.Float64(), frames, s.Steps, s.Swaps, s.Rollbacks)
	if err == nil {
		err = l.f.Sync()
	}
	if err != nil {
		return fmt.Errorf("adaptdrive: -rss-log: %w", err)
	}
	return nil
}

func (l *rssLogger) Close() error { return l.f.Close() }

// residentMB returns the process's resident set size in MB (10⁶ bytes)
// from /proc/self/status (VmRSS); where there is no /proc, the memory the
// Go runtime holds from the system (MemStats.Sys), an upper bound of the
// Go part.
func residentMB() (float64, error) {
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		return float64(ms.Sys) / 1e6, nil
	}
	for line := range bytes.Lines(b) {
		if v, ok := bytes.CutPrefix(line, []byte("VmRSS:")); ok {
			f := bytes.Fields(v) // "12345 kB"
			if len(f) == 2 && string(f[1]) == "kB" {
				kb, err := strconv.ParseFloat(string(f[0]), 64)
				if err == nil {
					return kb * 1024 / 1e6, nil
				}
			}
		}
	}
	return 0, fmt.Errorf("adaptdrive: no VmRSS line in /proc/self/status")
}
