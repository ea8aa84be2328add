// Package command holds what the commands under examples/ share, so that
// each of them stays flag parsing and printing over library calls: Main, the
// whole of a command's main function, and NewFlagSet and Parse, a flag set
// that reports on the command's standard error and takes -help as success.
//
// A command is a Run function, tested by calling it with its own arguments
// and writers:
//
//	func main() { command.Main(run) }
//
//	func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
//		fs := command.NewFlagSet("name", usage, stderr)
//		quiet := fs.Bool("quiet", false, "no progress output")
//		if help, err := command.Parse(fs, args); help || err != nil {
//			return err
//		}
//		...
//	}
//
// Errors start with the command's name ("name: ..."), as the commands' own
// errors do.
package command
