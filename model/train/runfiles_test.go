package train

import (
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

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
