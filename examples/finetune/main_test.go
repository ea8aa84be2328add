package main

import (
	"bytes"
	"context"
	"errors"
	"image"
	"image/png"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/parallaxdepth/parallax/model"
	"github.com/parallaxdepth/parallax/model/train"
)

// args returns the flags of a short run, then extra ones (a later flag
// overrides an earlier one).
func args(dataDir, out string, extra ...string) []string {
	return append([]string{"-data", dataDir, "-out", out, "-steps", "2", "-batch", "1", "-every", "1", "-seed", "1", "-val", "0.34", "-eval-batch", "3", "-quiet"}, extra...)
}

func runArgs(ctx context.Context, a []string) error {
	return run(ctx, a, &bytes.Buffer{}, &bytes.Buffer{})
}

// A short run on the committed synthetic pairs writes loadable weights, a
// checkpoint, a CSV log with one row per step and a PNG, and -resume after
// the end of the run refuses nothing but trains no further.
func TestRunWritesOutputs(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	a := args(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out)
	if err := runArgs(context.Background(), a); err != nil {
		t.Fatal(err)
	}
	w, err := model.Load(out)
	if err != nil {
		t.Fatal(err)
	}
	if w.Provenance["train.steps"] != "2" {
		t.Errorf("provenance %v", w.Provenance)
	}
	ck, err := train.LoadCheckpoint(out + ".ckpt")
	if err != nil || ck.Step != 2 {
		t.Fatalf("checkpoint: %v, %+v", err, ck)
	}
	log, err := os.ReadFile(filepath.Join(dir, "w.csv"))
	if err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSpace(string(log)), "\n")
	if len(lines) != 3 || !strings.HasPrefix(lines[0], "step,epoch,batch,learning_rate,appearance") || !strings.HasPrefix(lines[2], "2,") {
		t.Errorf("log:\n%s", log)
	}
	png, err := os.ReadFile(filepath.Join(dir, "w.png"))
	if err != nil || len(png) < 8 || string(png[1:4]) != "PNG" {
		t.Errorf("plot: %v, %d bytes", err, len(png))
	}
	// Resume a finished run with more steps: it continues from step 2.
	if err := runArgs(context.Background(), append(a, "-resume", "-steps", "3")); err != nil {
		t.Fatal(err)
	}
	if ck, err = train.LoadCheckpoint(out + ".ckpt"); err != nil || ck.Step != 3 {
		t.Fatalf("resumed checkpoint: %v, %+v", err, ck)
	}
	log, _ = os.ReadFile(filepath.Join(dir, "w.csv"))
	if n := len(strings.Split(strings.TrimSpace(string(log)), "\n")); n != 4 {
		t.Errorf("resumed log has %d lines, want 4", n)
	}
}

// An interrupted run (here, a context cancelled before the first step)
// still writes the weights so far, marked as interrupted, and a checkpoint
// that -resume continues from; it returns errInterrupted, which main turns
// into exit status 3.
func TestRunInterruptedWritesWeights(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	a := args(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out)
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if err := runArgs(ctx, a); !errors.Is(err, errInterrupted) {
		t.Fatalf("interrupted run: %v, want errInterrupted", err)
	}
	w, err := model.Load(out)
	if err != nil {
		t.Fatalf("no weights after an interrupted run: %v", err)
	}
	if got := w.Provenance["train.interrupted"]; got != "at step 0 of 2" {
		t.Errorf("train.interrupted = %q, want %q", got, "at step 0 of 2")
	}
	if _, err := train.LoadCheckpoint(out + ".ckpt"); err != nil {
		t.Fatalf("checkpoint: %v", err)
	}
	if err := runArgs(context.Background(), append(a, "-resume")); err != nil {
		t.Fatal(err)
	}
	if w, err = model.Load(out); err != nil || w.Provenance["train.interrupted"] != "" {
		t.Fatalf("resumed run: %v, provenance %v", err, w.Provenance)
	}
}

// TestMain lets TestSignals run the command's main in a child process.
func TestMain(m *testing.M) {
	if a := os.Getenv("FINETUNE_TEST_MAIN"); a != "" {
		os.Args = append([]string{"finetune"}, strings.Split(a, "\x1f")...)
		main()
		os.Exit(0)
	}
	os.Exit(m.Run())
}

// TestSignals: SIGINT, SIGTERM and SIGHUP each stop a running finetune
// with a checkpoint and the weights so far, and exit status 3 (before: exit
// 0 for SIGINT and SIGTERM, and no checkpoint for SIGHUP).
func TestSignals(t *testing.T) {
	if testing.Short() {
		t.Skip("runs the command three times")
	}
	for _, sig := range []syscall.Signal{syscall.SIGINT, syscall.SIGTERM, syscall.SIGHUP} {
		dir := t.TempDir()
		out := filepath.Join(dir, "w.safetensors")
		a := args(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out, "-steps", "100000", "-every", "0", "-val", "0")
		cmd := exec.Command(os.Args[0], "-test.run=^$")
		cmd.Env = append(os.Environ(), "FINETUNE_TEST_MAIN="+strings.Join(a, "\x1f"))
		var stderr bytes.Buffer
		cmd.Stderr = &stderr
		if err := cmd.Start(); err != nil {
			t.Fatal(err)
		}
		// Signal once training runs: the start line is printed just before.
		deadline := time.Now().Add(60 * time.Second)
		for !strings.Contains(stderr.String(), "training pairs") && time.Now().Before(deadline) {
			time.Sleep(50 * time.Millisecond)
		}
		time.Sleep(500 * time.Millisecond)
		cmd.Process.Signal(sig)
		err := cmd.Wait()
		var exit *exec.ExitError
		if !errors.As(err, &exit) || exit.ExitCode() != exitInterrupted {
			t.Errorf("%v: %v, want exit status %d; stderr:\n%s", sig, err, exitInterrupted, stderr.String())
			continue
		}
		if _, err := train.LoadCheckpoint(out + ".ckpt"); err != nil {
			t.Errorf("%v: checkpoint: %v", sig, err)
		}
		if w, err := model.Load(out); err != nil || w.Provenance["train.interrupted"] == "" {
			t.Errorf("%v: weights so far: %v", sig, err)
		}
	}
}

// TestProbeBeforeTraining: an output path that cannot be written (under
// /proc, read-only even for root) fails before step 1, naming it, and
// leaves no output at all (before: every step was trained, then the run
// failed and kept nothing).
func TestProbeBeforeTraining(t *testing.T) {
	if _, err := os.Stat("/proc/self"); err != nil {
		t.Skip("no /proc")
	}
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	for _, extra := range [][]string{{"-out", "/proc/w.safetensors"}, {"-checkpoint", "/proc/w.ckpt"}, {"-plot", "/proc/w.png"}} {
		var stderr bytes.Buffer
		err := run(context.Background(), args(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out, extra...), &bytes.Buffer{}, &stderr)
		if err == nil || !strings.HasPrefix(err.Error(), "finetune: ") || !strings.Contains(err.Error(), extra[1]) || strings.Contains(stderr.String(), "training pairs") {
			t.Errorf("%v: %v (stderr %q)", extra, err, stderr.String())
		}
		if ents, _ := os.ReadDir(dir); len(ents) != 0 {
			t.Errorf("%v: %d files written", extra, len(ents))
		}
	}
}

// TestStaleTempRemoved: a temporary file that a kill during a checkpoint
// write left beside our outputs is removed at the next start (before: it
// stayed forever); a file of another name stays.
func TestStaleTempRemoved(t *testing.T) {
	dir := t.TempDir()
	out := filepath.Join(dir, "w.safetensors")
	stale := filepath.Join(dir, ".w.safetensors.ckpt.tmp4242")
	other := filepath.Join(dir, ".notes.tmp1")
	os.WriteFile(stale, []byte("half a checkpoint"), 0o600)
	os.WriteFile(other, []byte("not ours"), 0o600)
	var stderr bytes.Buffer
	if err := run(context.Background(), args(filepath.Join("..", "..", "testdata", "synth", "greenhouse"), out, "-steps", "1"), &bytes.Buffer{}, &stderr); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(stale); err == nil {
		t.Error("stale temporary file stayed")
	}
	if _, err := os.Stat(other); err != nil {
		t.Error("another file was removed")
	}
	if !strings.Contains(stderr.String(), "removed 1 temporary file") {
		t.Errorf("stderr %q", stderr.String())
	}
}

// Bad input gets clear errors that start with the command's name.
func TestRunErrors(t *testing.T) {
	dir := t.TempDir()
	empty := filepath.Join(dir, "empty")
	os.MkdirAll(filepath.Join(empty, "left"), 0o755)
	os.MkdirAll(filepath.Join(empty, "right"), 0o755)
	lonely := filepath.Join(dir, "lonely")
	os.MkdirAll(filepath.Join(lonely, "left"), 0o755)
	os.MkdirAll(filepath.Join(lonely, "right"), 0o755)
	src, _ := os.ReadFile(filepath.Join("..", "..", "testdata", "synth", "greenhouse", "left", "000000.png"))
	os.WriteFile(filepath.Join(lonely, "left", "a.png"), src, 0o644)
	mismatch := filepath.Join(dir, "mismatch")
	os.MkdirAll(filepath.Join(mismatch, "left"), 0o755)
	os.MkdirAll(filepath.Join(mismatch, "right"), 0o755)
	os.WriteFile(filepath.Join(mismatch, "left", "b.png"), src, 0o644)
	small, _ := os.Create(filepath.Join(mismatch, "right", "b.png"))
	png.Encode(small, image.NewGray(image.Rect(0, 0, 64, 32)))
	small.Close()
	bad := filepath.Join(dir, "bad.safetensors")
	os.WriteFile(bad, []byte("not weights"), 0o644)
	synthDir := filepath.Join("..", "..", "testdata", "synth", "greenhouse")
	out := filepath.Join(dir, "w.safetensors")
	earlier := filepath.Join(dir, "earlier.ckpt")
	os.WriteFile(earlier, []byte("an earlier run's state"), 0o644)
	cases := []struct {
		name  string
		extra []string
		want  string
	}{
		{"no data", []string{"-data", ""}, "-data DIR and -out FILE are required"},
		{"missing dir", []string{"-data", filepath.Join(dir, "nowhere")}, "nowhere"},
		{"no pairs", []string{"-data", empty}, "holds no images"},
		{"missing partner", []string{"-data", lonely}, "a.png"},
		{"mismatched sizes", []string{"-data", mismatch}, "b.png"},
		{"bad weights", []string{"-weights", bad}, bad},
		{"both starts", []string{"-weights", bad, "-from-scratch"}, "exclude each other"},
		{"resume without checkpoint", []string{"-resume", "-checkpoint", filepath.Join(dir, "none.ckpt")}, "none.ckpt"},
		{"batch too large", []string{"-batch", "5"}, "make no batch of 5"},
		{"zero steps", []string{"-steps", "0"}, "must be positive"},
		{"earlier checkpoint", []string{"-checkpoint", earlier}, "exists from an earlier run"},
		{"no output folder", []string{"-out", filepath.Join(dir, "nowhere", "w.safetensors")}, "nowhere does not exist"},
		{"no log folder", []string{"-log", filepath.Join(dir, "nowhere", "log.csv")}, "log.csv"},
		{"argument", []string{"extra"}, "unexpected argument"},
		{"stereo without scratch", []string{"-stereo"}, "fresh start only"},
		{"bad milestones", []string{"-milestones", "0.6,x"}, "not a number"},
		{"milestone out of range", []string{"-milestones", "1.5"}, "milestone 1.5 must be a fraction in (0, 1)"},
		{"NaN rate", []string{"-lr", "NaN"}, "learning rate NaN must be positive"},
		{"negative rate", []string{"-lr", "-1e-4"}, "learning rate -0.0001 must be positive"},
		{"negative hold-out", []string{"-val", "-0.2"}, "validation fraction -0.2"},
	}
	for _, tc := range cases {
		err := runArgs(context.Background(), args(synthDir, out, tc.extra...))
		if err == nil || !strings.HasPrefix(err.Error(), "finetune: ") || !strings.Contains(err.Error(), tc.want) {
			t.Errorf("%s: %v, want an error containing %q", tc.name, err, tc.want)
		} else {
			t.Logf("%s: %v", tc.name, err)
		}
	}
	if _, err := os.Stat(out); err == nil {
		t.Errorf("a failed run wrote %s", out)
	}
	if b, _ := os.ReadFile(earlier); string(b) != "an earlier run's state" {
		t.Errorf("a fresh run changed the earlier checkpoint: %q", b)
	}
}
