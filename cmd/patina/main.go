// Command patina is the one binary of Patina: with no arguments it opens the
// workbench; with a subcommand it runs that part of the job headless.
//
// Exit codes: 0 success, 1 internal failure, 2 bad input or usage, 130
// interrupted (SIGINT).
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/debug"
	"sort"
	"strings"
	"syscall"

	"patina/assets/capture"
)

// command is one row of the subcommand table: `patina help` and
// `patina help NAME` are generated from these rows.
type command struct {
	name    string
	summary string // one line, shown by `patina help`
	usage   string // synopsis and flags, shown by `patina help NAME`
	run     func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

// commands is the table. Files of this package add their rows from init, so
// each subcommand lives beside its own code.
var commands = map[string]*command{}

// helpOrder fixes the listing order; rows not named here follow alphabetically.
var helpOrder = []string{"open", "demo", "check", "fit", "render", "compare", "report", "export", "trace", "version", "help"}

func register(c *command) {
	if _, dup := commands[c.name]; dup {
		panic("patina: subcommand registered twice: " + c.name)
	}
	commands[c.name] = c
}

// exitError carries an exit code with the error that caused it.
type exitError struct {
	code int
	err  error
}

func (e *exitError) Error() string { return e.err.Error() }
func (e *exitError) Unwrap() error { return e.err }

// badInput marks err as a problem with the user's input or arguments (exit 2).
func badInput(err error) error {
	if err == nil {
		return nil
	}
	return &exitError{code: 2, err: err}
}

// badInputf formats a bad-input error.
func badInputf(format string, a ...any) error { return badInput(fmt.Errorf(format, a...)) }

// openWorkbench is set by the workbench file when the binary is built with
// the desktop interface; headless builds (-tags nogui) leave it nil.
var openWorkbench func(ctx context.Context, args []string) error

// defaultMemoryLimit is the soft memory limit the binary runs under unless
// GOMEMLIMIT says otherwise: with Go's default collector headroom the fit of
// a capture of 12-megapixel photos peaked near 3 GB, with this limit near
// 1.6 GB (fit/large_capture_test.go). It is soft: work that needs more still
// gets it, the collector only runs more often.
const defaultMemoryLimit = 1536 << 20

func main() {
	if os.Getenv("GOMEMLIMIT") == "" {
		debug.SetMemoryLimit(defaultMemoryLimit)
	}
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	interrupted := ctx.Err() != nil
	stop()
	if interrupted && code != 0 {
		fmt.Fprintln(os.Stderr, "patina: interrupted")
		code = 130
	}
	os.Exit(code)
}

// run dispatches args and returns the exit code.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		if openWorkbench != nil {
			return exitCode(stderr, openWorkbench(ctx, nil))
		}
		printHelp(stdout)
		return 0
	}
	name := args[0]
	if name == "-h" || name == "--help" || name == "-help" {
		name = "help"
	}
	c, ok := commands[name]
	if !ok {
		fmt.Fprintf(stderr, "patina: unknown subcommand %q%s\nRun 'patina help' for the list.\n", name, suggest(name))
		return 2
	}
	return exitCode(stderr, c.run(ctx, args[1:], stdout, stderr))
}

func exitCode(stderr io.Writer, err error) int {
	if err == nil {
		return 0
	}
	if errors.Is(err, errHelpShown) {
		return 0
	}
	code := 1
	var ee *exitError
	if errors.As(err, &ee) {
		code = ee.code
	}
	if errors.Is(err, context.Canceled) {
		code = 130
	}
	fmt.Fprintln(stderr, "patina:", err)
	return code
}

// errHelpShown is returned by a subcommand that printed its help on -h.
var errHelpShown = errors.New("help shown")

func sortedNames() []string {
	seen := map[string]bool{}
	var names []string
	for _, n := range helpOrder {
		if _, ok := commands[n]; ok {
			names = append(names, n)
			seen[n] = true
		}
	}
	var rest []string
	for n := range commands {
		if !seen[n] {
			rest = append(rest, n)
		}
	}
	sort.Strings(rest)
	return append(names, rest...)
}

func printHelp(w io.Writer) {
	fmt.Fprintln(w, "Patina fits physically based materials to calibrated photographs of an object")
	fmt.Fprintln(w, "and relights it. With no subcommand it opens the workbench.")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Usage: patina [SUBCOMMAND] [ARGUMENTS]")
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Subcommands:")
	for _, n := range sortedNames() {
		fmt.Fprintf(w, "  %-9s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w)
	fmt.Fprintln(w, "Run 'patina help SUBCOMMAND' for its arguments.")
}

// suggest returns a "; did you mean ...?" hint for a mistyped name.
func suggest(name string) string {
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	return capture.SuggestName(name, names)
}

func init() {
	register(&command{
		name:    "help",
		summary: "list the subcommands, or show one subcommand's arguments",
		usage:   "patina help [SUBCOMMAND]",
		run: func(_ context.Context, args []string, stdout, stderr io.Writer) error {
			if len(args) == 0 {
				printHelp(stdout)
				return nil
			}
			c, ok := commands[args[0]]
			if !ok {
				return badInputf("help: unknown subcommand %q%s", args[0], suggest(args[0]))
			}
			fmt.Fprintf(stdout, "patina %s: %s\n\n%s\n", c.name, c.summary, strings.TrimRight(c.usage, "\n"))
			return nil
		},
	})
}
