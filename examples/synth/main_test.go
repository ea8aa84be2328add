package main

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

// runArgs runs the command with a small image size, then extra flags (a
// later flag overrides an earlier one).
func runArgs(out string, extra ...string) (stdout string, err error) {
	var o, e bytes.Buffer
	err = run(context.Background(), append([]string{"-out", out, "-width", "32", "-height", "16", "-samples", "2", "-workers", "2", "-n", "2"}, extra...), &o, &e)
	return o.String(), err
}

func TestRun(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	stdout, err := runArgs(dir, "-style", "storage")
	if err != nil {
		t.Fatal(err)
	}
	if want := "wrote 2 storage pairs of 32x16 to " + dir; !strings.Contains(stdout, want) {
		t.Errorf("stdout %q, want %q", stdout, want)
	}
	for _, f := range []string{"rig.json", "left/000001.png", "right/000000.png", "truth/disp_left/000001.pfm", "truth/occ_right/000001.png"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing %s: %v", f, err)
		}
	}
	varied := filepath.Join(t.TempDir(), "varied")
	if _, err := runArgs(varied, "-style", "orchard", "-quiet"); err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"rigs/000000.json", "rigs/000001.json", "left/000001.png"} {
		if _, err := os.Stat(filepath.Join(varied, f)); err != nil {
			t.Errorf("varied: missing %s: %v", f, err)
		}
	}
	for _, c := range []struct {
		name  string
		extra []string
		want  string
	}{
		{"no -out", []string{"-out", ""}, "-out DIR is required"},
		{"bad style", []string{"-style", "garden"}, "unknown style"},
		{"no pairs", []string{"-n", "0"}, "-n 0"},
		{"tiny", []string{"-width", "1"}, "at least 2×1"},
		{"workers", []string{"-workers", "0"}, "-workers 0"},
		{"samples", []string{"-samples", "99"}, "samples"},
		{"other rig", []string{"-style", "greenhouse"}, "another rig"},
		{"bad variation", []string{"-vary", "some"}, "unknown variation"},
		{"varied into one rig", []string{"-style", "orchard"}, "one rig"},
		{"unknown flag", []string{"-colour", "red"}, "flag provided but not defined: -colour"},
		{"bad number", []string{"-n", "many"}, "invalid value \"many\" for flag -n"},
		{"argument", []string{"extra"}, "unexpected argument \"extra\""},
	} {
		_, err := runArgs(dir, append([]string{"-style", "storage", "-quiet"}, c.extra...)...)
		if err == nil || !strings.HasPrefix(err.Error(), "synth: ") || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one starting with \"synth: \" that mentions %q", c.name, err, c.want)
		}
	}
	var stderr bytes.Buffer
	if err := run(context.Background(), []string{"-help"}, &bytes.Buffer{}, &stderr); err != nil || !strings.Contains(stderr.String(), "usage: synth -out DIR") {
		t.Errorf("-help: %v, stderr %q", err, stderr.String())
	}
}

// TestCancel: a run of many pairs stops soon after its context is
// cancelled (once its first pair is on disk), with an error, instead of
// writing them all.
func TestCancel(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "out")
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	done := make(chan error, 1)
	go func() {
		done <- run(ctx, []string{"-out", dir, "-width", "32", "-height", "16", "-samples", "1", "-workers", "2", "-n", "100000", "-quiet"}, &bytes.Buffer{}, &bytes.Buffer{})
	}()
	deadline := time.Now().Add(60 * time.Second)
	for time.Now().Before(deadline) {
		if _, err := os.Stat(filepath.Join(dir, "left", "000000.png")); err == nil {
			break
		}
		time.Sleep(20 * time.Millisecond)
	}
	cancel()
	select {
	case err := <-done:
		if !errors.Is(err, context.Canceled) || !strings.HasPrefix(err.Error(), "synth: stopped after ") {
			t.Errorf("cancelled run: %v; want \"synth: stopped after …\" wrapping context.Canceled", err)
		}
	case <-time.After(30 * time.Second):
		t.Fatal("the run went on for 30 s after its context was cancelled")
	}
	if left, err := os.ReadDir(filepath.Join(dir, "left")); err != nil || len(left) > 100 {
		t.Errorf("%d left views written (%v); want a few", len(left), err)
	}
}
