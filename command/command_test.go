package command

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"strings"
	"testing"
)

func TestParse(t *testing.T) {
	var stderr bytes.Buffer
	fs := NewFlagSet("tool", "usage: tool [flags]\n", &stderr)
	n := fs.Int("n", 3, "how many")
	if help, err := Parse(fs, []string{"-n", "5", "rest"}); help || err != nil || *n != 5 || fs.Arg(0) != "rest" {
		t.Fatalf("Parse(-n 5 rest) = %v, %v; n = %d, args %q", help, err, *n, fs.Args())
	}
	if stderr.Len() != 0 {
		t.Errorf("a good parse wrote %q", stderr.String())
	}
	for _, arg := range []string{"-help", "-h"} {
		stderr.Reset()
		fs := NewFlagSet("tool", "usage: tool [flags]\n", &stderr)
		fs.Int("n", 3, "how many")
		help, err := Parse(fs, []string{arg})
		if !help || err != nil {
			t.Errorf("Parse(%s) = %v, %v; want help and no error", arg, help, err)
		}
		if got := stderr.String(); !strings.HasPrefix(got, "usage: tool [flags]\n") || !strings.Contains(got, "how many (default 3)") {
			t.Errorf("Parse(%s) printed %q; want the usage, then the flags", arg, got)
		}
	}
	fs = NewFlagSet("tool", "usage\n", io.Discard)
	help, err := Parse(fs, []string{"-colour", "red"})
	if help || err == nil || err.Error() != "tool: flag provided but not defined: -colour" {
		t.Errorf("Parse(-colour red) = %v, %v; want the error named after the command", help, err)
	}
}

type exitCode int

func (c exitCode) Error() string { return fmt.Sprintf("stopped (%d)", int(c)) }
func (c exitCode) ExitCode() int { return int(c) }

func TestMainStatus(t *testing.T) {
	cases := []struct {
		name   string
		err    error
		status int
		stderr string
	}{
		{"success", nil, 0, ""},
		{"error", errors.New("tool: bad input"), 1, "tool: bad input\n"},
		{"exit coder wrapped", fmt.Errorf("tool: %w", exitCode(3)), 3, "tool: stopped (3)\n"},
	}
	for _, c := range cases {
		var stdout, stderr bytes.Buffer
		var gotArgs []string
		run := func(ctx context.Context, args []string, out, errw io.Writer) error {
			gotArgs = args
			fmt.Fprint(out, "result")
			return c.err
		}
		status := mainStatus(run, []string{"-x", "a"}, &stdout, &stderr, nil)
		if status != c.status || stderr.String() != c.stderr || stdout.String() != "result" {
			t.Errorf("%s: status %d, stdout %q, stderr %q; want %d, \"result\", %q", c.name, status, stdout.String(), stderr.String(), c.status, c.stderr)
		}
		if strings.Join(gotArgs, " ") != "-x a" {
			t.Errorf("%s: run got args %q", c.name, gotArgs)
		}
	}
}
