package command

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
)

// Run is a command: it parses args (without the program's name), writes its
// results to stdout and its progress and messages to stderr, and stops early
// when ctx is done.
type Run func(ctx context.Context, args []string, stdout, stderr io.Writer) error

// ExitCoder is an error that asks Main for an exit status other than 1.
type ExitCoder interface {
	error
	ExitCode() int
}

// Main runs run on the process's arguments and standard streams and exits
// the process when run returns an error: it prints the error on standard
// error and exits with status 1, or with the ExitCode of an ExitCoder in the
// error's chain. The first of signals (none: no signal) cancels run's
// context; after that, and after run returns, signals have their default
// effect again.
func Main(run Run, signals ...os.Signal) {
	if code := mainStatus(run, os.Args[1:], os.Stdout, os.Stderr, signals); code != 0 {
		os.Exit(code)
	}
}

// mainStatus is Main without the exit: it returns the exit status.
func mainStatus(run Run, args []string, stdout, stderr io.Writer, signals []os.Signal) int {
	ctx, stop := context.Background(), func() {}
	if len(signals) > 0 {
		ctx, stop = signal.NotifyContext(ctx, signals...)
		// Once the first signal has cancelled run's context, the next one
		// has its default effect (a second Ctrl-C ends a run that is slow
		// to stop).
		go func() {
			<-ctx.Done()
			stop()
		}()
	}
	err := run(ctx, args, stdout, stderr)
	stop()
	return exitStatus(err, stderr)
}

// exitStatus prints err on w and returns the exit status Main gives it: 0 for
// nil, the ExitCode of an ExitCoder in err's chain, else 1.
func exitStatus(err error, w io.Writer) int {
	if err == nil {
		return 0
	}
	fmt.Fprintln(w, err)
	if c, ok := errors.AsType[ExitCoder](err); ok {
		return c.ExitCode()
	}
	return 1
}

// NewFlagSet returns a flag set named name (the command's name) that reports
// parse errors on stderr and whose -help prints usage and then every flag
// with its default.
func NewFlagSet(name, usage string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprint(stderr, usage)
		fs.PrintDefaults()
	}
	return fs
}

// Parse parses args with fs. help is true when args asked for -help or -h
// (the usage has then been printed, and the command returns nil); err is a
// parse error, prefixed with the flag set's name.
func Parse(fs *flag.FlagSet, args []string) (help bool, err error) {
	err = fs.Parse(args)
	if errors.Is(err, flag.ErrHelp) {
		return true, nil
	}
	if err != nil {
		return false, fmt.Errorf("%s: %w", fs.Name(), err)
	}
	return false, nil
}
