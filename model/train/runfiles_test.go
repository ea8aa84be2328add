package train

import (
	"errors"
	"image"
	"image/color"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/parallaxdepth/parallax/internal/testutil"
	"github.com/parallaxdepth/parallax/loss"
	"github.com/parallaxdepth/parallax/model"
)

// TestProbeWritable: a writable folder passes and keeps no file; a folder
// where nothing can be created (/proc, read-only even for root; a 0555
// folder for other users), a missing folder and a path that is a folder
// fail, naming the path.
func TestProbeWritable(t *testing.T) {
	dir := t.TempDir()
	ok := filepath.Join(dir, "w.safetensors")
	if err := ProbeWritable(ok, filepath.Join(dir, "w.csv")); err != nil {
		t.Fatal(err)
	}
	if ents, _ := os.ReadDir(dir); len(ents) != 0 {
		t.Errorf("probe left %d files", len(ents))
	}
	bad := []string{filepath.Join(dir, "nowhere", "w.safetensors"), dir}
	if _, err := os.Stat("/proc/self"); err == nil {
		bad = append(bad, "/proc/w.safetensors")
	}
	if os.Geteuid() != 0 {
		ro := filepath.Join(dir, "ro")
		os.Mkdir(ro, 0o555)
		bad = append(bad, filepath.Join(ro, "w.safetensors"))
	}
	for _, p := range bad {
		if err := ProbeWritable(ok, p); err == nil || !strings.HasPrefix(err.Error(), "train: ") || !strings.Contains(err.Error(), p) {
			t.Errorf("%s: %v", p, err)
		}
	}
}

// TestRemoveStaleTemps: the leftovers of an atomic write of our outputs go,
// everything else stays.
func TestRemoveStaleTemps(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	ck := out + ".ckpt"
	ours := []string{filepath.Join(dir, ".w.safetensors.ckpt.tmp123456"), filepath.Join(dir, ".w.safetensors.tmp99")}
	theirs := []string{filepath.Join(dir, ".other.ckpt.tmp123"), filepath.Join(dir, ".w.safetensors.ckpt.tmp1.keep"), out, ck}
	for _, p := range append(ours, theirs...) {
		os.WriteFile(p, []byte("x"), 0o644)
	}
	removed, err := RemoveStaleTemps(out, ck)
	if err != nil || len(removed) != 2 {
		t.Fatalf("removed %v, %v", removed, err)
	}
	for _, p := range ours {
		if _, err := os.Stat(p); err == nil {
			t.Errorf("%s stayed", p)
		}
	}
	for _, p := range theirs {
		if _, err := os.Stat(p); err != nil {
			t.Errorf("%s removed", p)
		}
	}
}

// TestCheckFreeSpace: a need beyond any disk fails with the numbers; a
// small one passes.
func TestCheckFreeSpace(t *testing.T) {
	dir := t.TempDir()
	if err := CheckFreeSpace(map[string]int64{dir: 1}); err != nil {
		t.Fatal(err)
	}
	err := CheckFreeSpace(map[string]int64{dir: 1 << 60})
	if _, ok := freeBytes(dir); !ok {
		t.Skip("free space not readable here")
	}
	if !errors.Is(err, ErrNoSpace) || !strings.Contains(err.Error(), "MB free") || !strings.Contains(err.Error(), "1099511627776.0 MB needed") {
		t.Errorf("huge need: %v", err)
	}
}

// TestRunFiles: the checkpoint refusal, the schedule note, the provenance
// stamp and the size estimate.
func TestRunFiles(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "w.ckpt")
	if err := CheckNewCheckpoint(p); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(p, nil, 0o644)
	if err := CheckNewCheckpoint(p); err == nil || !strings.Contains(err.Error(), "exists from an earlier run") {
		t.Errorf("existing checkpoint: %v", err)
	}
	ck := &Checkpoint{Step: 40, Steps: 100, Schedule: Schedule{Rate: DefaultRate}}
	if n := ScheduleChange(ck, 100, Schedule{Rate: DefaultRate}); n != "" {
		t.Errorf("same schedule: %q", n)
	}
	if n := ScheduleChange(ck, 200, Schedule{Rate: DefaultRate}); !strings.Contains(n, "from step 40") {
		t.Errorf("other steps: %q", n)
	}
	if n := ScheduleChange(ck, 100, Schedule{Rate: 1e-4}); !strings.Contains(n, "rate 0.0001") {
		t.Errorf("other rate: %q", n)
	}
	if n := ScheduleChange(ck, 100, Schedule{Rate: DefaultRate, Milestones: []float64{0.6, 0.8}}); !strings.Contains(n, "milestones 0.6,0.8") {
		t.Errorf("other milestones: %q", n)
	}
	// The same milestones written another way are the same schedule.
	ck.Schedule.Milestones = []float64{0.6, 0.8}
	if ms, err := ParseMilestones("0.60, 0.8"); err != nil || ScheduleChange(ck, 100, Schedule{Rate: DefaultRate, Milestones: ms}) != "" {
		t.Errorf("same milestones: %v %v", ms, err)
	}
	for _, bad := range []string{"0.6,x", "0.6,,0.8"} {
		if _, err := ParseMilestones(bad); err == nil || !strings.HasPrefix(err.Error(), "train: ") {
			t.Errorf("milestones %q: error %v", bad, err)
		}
	}
	w, err := model.Default()
	if err != nil {
		t.Fatal(err)
	}
	RunInfo{Data: "d", Start: "s", Command: "finetune -x", Rate: 0.5, Interrupted: "at step 3 of 9"}.Stamp(w)
	if w.Provenance[model.ProvenanceStatus] != "" || w.Provenance["train.data"] != "d" || w.Provenance["train.lr"] != "0.5" || w.Provenance["train.interrupted"] != "at step 3 of 9" || w.Provenance["train.date"] == "" {
		t.Errorf("provenance %v", w.Provenance)
	}
	n := 0
	for _, v := range w.Params {
		n += len(v)
	}
	if got := CheckpointBytes(w); got != int64(12*n+1<<20) {
		t.Errorf("CheckpointBytes %d for %d values", got, n)
	}
}

// TestStepLog: rows survive Save and Load, Load keeps the rows up to the
// checkpoint's step, and the plot is a PNG.
func TestStepLog(t *testing.T) {
	dir := t.TempDir()
	l := &StepLog{Path: filepath.Join(dir, "log.csv")}
	for s := 1; s <= 4; s++ {
		l.Add(Progress{Step: s, Steps: 4, Rate: 0.1, Terms: loss.Terms{Total: float64(s)}, Skipped: s == 2})
	}
	if err := l.Save(); err != nil {
		t.Fatal(err)
	}
	back := &StepLog{Path: l.Path}
	if err := back.Load(3); err != nil || back.Len() != 3 {
		t.Fatalf("Load(3): %v, %d rows", err, back.Len())
	}
	first, last := back.Window(1)
	if first.Total != 1 || last.Total != 3 {
		t.Errorf("window %v %v (step 2 is skipped)", first, last)
	}
	png := filepath.Join(dir, "loss.png")
	if err := l.SavePlot(png); err != nil {
		t.Fatal(err)
	}
	if b, err := os.ReadFile(png); err != nil || string(b[1:4]) != "PNG" {
		t.Errorf("plot: %v", err)
	}
}

// TestLossCurve: the curve of a log whose total is 0.1 for 50 steps and
// then 0.01 (the other terms 0.02 and 0.002) decodes as an 800×450 PNG,
// with the total's smoothed line at the row where 0.1 maps on the chart's
// logarithmic axis (computed here from the axis's definition) and the
// held-out point where its value maps; the CSV keeps the held-out column
// and reads back, and a log of the older 14 columns still loads.
func TestLossCurve(t *testing.T) {
	dir := t.TempDir()
	l := &StepLog{Path: filepath.Join(dir, "log.csv"), Plot: filepath.Join(dir, "loss.png")}
	for s := 1; s <= 100; s++ {
		tot := map[bool]float64{true: 0.1, false: 0.01}[s <= 50]
		p := Progress{Step: s, Steps: 100, Terms: loss.Terms{Appearance: tot / 2, Smoothness: 0.002, Consistency: 0.02, Total: tot}}
		if s == 100 {
			p.Validated, p.Validation = true, loss.Terms{Total: 0.03}
		}
		l.Add(p)
	}
	if err := l.Save(); err != nil {
		t.Fatal(err)
	}
	img := testutil.PNG(t, l.Plot)
	if img.Bounds() != image.Rect(0, 0, 800, 450) {
		t.Fatalf("size %v", img.Bounds())
	}
	c, err := l.Chart()
	if err != nil {
		t.Fatal(err)
	}
	lay, err := c.Layout()
	if err != nil {
		t.Fatal(err)
	}
	if !lay.LogY || lay.Y0 > 0.002 || lay.Y1 < 0.1 {
		t.Fatalf("axis %+v: want a log axis covering 0.002 … 0.1", lay)
	}
	a := lay.Area
	row := func(v float64) int {
		f := (math.Log10(v) - math.Log10(lay.Y0)) / (math.Log10(lay.Y1) - math.Log10(lay.Y0))
		return a.Max.Y - 1 - int(math.Round(f*float64(a.Dy()-1)))
	}
	col := func(step float64) int { // steps 1 … 100 span the area
		return a.Min.X + int(math.Round((step-1)/99*float64(a.Dx()-1)))
	}
	at := func(x, y int, want color.NRGBA) bool {
		for dy := -1; dy <= 1; dy++ {
			for dx := -1; dx <= 1; dx++ {
				if color.NRGBAModel.Convert(img.At(x+dx, y+dy)) == want {
					return true
				}
			}
		}
		return false
	}
	total := plotTerms[0].col
	if !at(col(25), row(0.1), total) {
		t.Errorf("no total line at step 25, value 0.1 (pixel %d, %d)", col(25), row(0.1))
	}
	if at(col(25), a.Max.Y-1-int(math.Round((0.1-lay.Y0)/(lay.Y1-lay.Y0)*float64(a.Dy()-1))), total) {
		t.Error("total line where 0.1 maps on a linear axis")
	}
	if !at(col(100), row(0.03), valColor) {
		t.Errorf("no held-out point at step 100, value 0.03")
	}
	back := &StepLog{Path: l.Path}
	if err := back.Load(math.MaxInt); err != nil || back.Len() != 100 || back.rows[99].val != 0.03 || !math.IsNaN(back.rows[0].val) {
		t.Fatalf("read back: %v, %d rows", err, back.Len())
	}
	old := filepath.Join(dir, "old.csv")
	if err := os.WriteFile(old, []byte(strings.Join(logHeader[:oldLogFields], ",")+"\n1,0,0,0.001,0.2,0.002,0.004,0.206,0,0.04,3.3,1.2,4.9,0.8\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := PlotLog(old, filepath.Join(dir, "old.png")); err != nil {
		t.Errorf("a 14-column log: %v", err)
	}
	if err := PlotLog(filepath.Join(dir, "missing.csv"), filepath.Join(dir, "x.png")); err == nil {
		t.Error("a missing log was plotted")
	}
}

// MovingAverage against values worked by hand: τ = 2, s = 1, 1 + (2−1)/2,
// the same past the NaN, 1.5 + (4−1.5)/2.
func TestMovingAverage(t *testing.T) {
	got := MovingAverage([]float64{1, 2, math.NaN(), 4}, 2)
	for i, w := range []float64{1, 1.5, 1.5, 2.75} {
		if got[i] != w {
			t.Errorf("s[%d] = %v, want %v", i, got[i], w)
		}
	}
	if SmoothingSteps(100) != 5 || SmoothingSteps(20000) != 200 {
		t.Errorf("SmoothingSteps: %d, %d", SmoothingSteps(100), SmoothingSteps(20000))
	}
}
