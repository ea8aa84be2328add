//go:build unix

package command

import (
	"context"
	"errors"
	"io"
	"os"
	"syscall"
	"testing"
	"time"
)

// TestMainSignal sends the process a signal that Main was given: run's
// context ends, and run's error decides the status.
func TestMainSignal(t *testing.T) {
	run := func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
		if err := syscall.Kill(os.Getpid(), syscall.SIGUSR1); err != nil {
			return err
		}
		select {
		case <-ctx.Done():
			return errors.New("tool: interrupted")
		case <-time.After(10 * time.Second):
			return nil
		}
	}
	if status := mainStatus(run, nil, io.Discard, io.Discard, []os.Signal{syscall.SIGUSR1}); status != 1 {
		t.Errorf("status %d after the signal; want 1 (run saw its context end)", status)
	}
}
