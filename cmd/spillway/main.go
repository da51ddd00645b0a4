// Command spillway fits a two-stage Bayesian mediation model on weekly
// marketing data: upper-funnel spend (video, audio) lifts branded search
// demand, and the outcome depends on queries, paid search and the upper
// funnel directly. Run 'spillway help' for the commands.
//
// Each command lives in its own cmd_NAME.go file and registers itself from
// init() with register; main.go holds the dispatch, the help and the one
// table of exit codes (exitCode).
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"runtime/debug"
	"slices"
	"strings"
	"syscall"

	"github.com/spf13/pflag"

	"spillway/funnel/data"
)

// Exit codes; exitCode maps errors onto them.
const (
	exitOK          = 0   // success
	exitFailure     = 1   // the work could not be done
	exitUsage       = 2   // bad usage or bad data; nothing was written
	exitInterrupted = 130 // SIGINT or SIGTERM; nothing half-written was left
)

// exitStatusHelp is the EXIT STATUS section every command's long help ends
// with.
const exitStatusHelp = `EXIT STATUS
  0    success
  1    failure: the work could not be done
  2    bad usage or bad data (the message names the file, line and column);
       nothing is written
  130  interrupted; nothing half-written is left behind`

// version is set at build time with -ldflags "-X main.version=v1.2.3"; when
// empty the module version from the build information is used.
var version = ""

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	go func() {
		<-ctx.Done()
		stop() // a second signal ends the process at once
	}()
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// command is one subcommand. Files cmd_NAME.go build one in init() and pass
// it to register, for example:
//
//	func init() {
//		var opts fitOptions // roles roleFlags; out string; force bool; ...
//		fs := pflag.NewFlagSet("fit", pflag.ContinueOnError)
//		opts.addFlags(fs) // calls opts.roles.addFlags(fs), adds --out, --force, ...
//		register(&command{name: "fit", usage: "fit --out FOLDER (role flags) [flags]",
//			short: "fit both stages", long: "...\n\nEXAMPLE\n  spillway fit ...\n\n" + exitStatusHelp,
//			order: 40, flags: fs,
//			run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
//				return runFit(ctx, &opts, args, stdout, stderr)
//			}})
//	}
//
// A writing command checks its output folder with newOutDir before any
// work, defers Abort, and calls Commit at the end; it returns ctx.Err()
// (or an error wrapping context.Canceled) when interrupted.
type command struct {
	// name is the word after spillway; usage is the synopsis after
	// "spillway " (e.g. "inspect --data FILE [flags]"); short is a
	// one-line summary for 'spillway help'.
	name, usage, short string
	// long is the full help: description paragraphs, then an "EXAMPLE"
	// section, then exitStatusHelp. The flags are listed before EXAMPLE.
	long string
	// order is the position in 'spillway help' (run 10, simulate 20,
	// inspect 30, fit 40, split 50, chart 60, report 70, validate 80,
	// allocate 90).
	order int
	// flags is made with pflag.NewFlagSet(name, pflag.ContinueOnError).
	// register discards its output (run reports parse errors itself) and
	// keeps the flags in the order they were added for the help. Before
	// every parse run resets each flag to its default, so that run can
	// be called many times (as tests do).
	flags *pflag.FlagSet
	// run does the work with the arguments left after the flags. Its
	// error is printed once as "spillway NAME: message"; wrap errors with
	// usagef or badData to choose the exit status (see exitCode).
	run func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

// commands holds the registered commands by name.
var commands = map[string]*command{}

// register adds c to the commands. It panics on a programmer error: an
// empty or repeated name, or a missing flag set or run function.
func register(c *command) {
	switch {
	case c.name == "" || strings.HasPrefix(c.name, "-"):
		panic("spillway: command without a name")
	case commands[c.name] != nil:
		panic("spillway: command " + c.name + " registered twice")
	case c.flags == nil || c.run == nil:
		panic("spillway: command " + c.name + " lacks flags or run")
	}
	c.flags.SetOutput(io.Discard)
	c.flags.Usage = func() {}
	c.flags.SortFlags = false // help lists flags in the order they were added
	commands[c.name] = c
}

// sortedCommands returns the commands in help order.
func sortedCommands() []*command {
	cs := make([]*command, 0, len(commands))
	for _, c := range commands {
		cs = append(cs, c)
	}
	slices.SortFunc(cs, func(a, b *command) int {
		if a.order != b.order {
			return a.order - b.order
		}
		return strings.Compare(a.name, b.name)
	})
	return cs
}

// run is the testable entry point: it runs the command named by args[0]
// and returns the exit status. It is not safe for concurrent use (flag
// values are package state).
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		writeTopHelp(stderr)
		return exitUsage
	}
	name := args[0]
	switch name {
	case "help", "-h", "--help", "-help":
		return runHelp(args[1:], stdout, stderr)
	case "version", "--version":
		fmt.Fprintf(stdout, "spillway %s\n", spillwayVersion())
		return exitOK
	}
	c := commands[name]
	if c == nil {
		if strings.HasPrefix(name, "-") {
			fmt.Fprintf(stderr, "spillway: unknown flag %s\n", name)
		} else {
			fmt.Fprintf(stderr, "spillway: unknown command %q\n", name)
		}
		fmt.Fprintf(stderr, "Run 'spillway help' for usage.\n")
		return exitUsage
	}
	resetFlags(c.flags)
	if err := c.flags.Parse(args[1:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			writeCommandHelp(stdout, c)
			return exitOK
		}
		return report(ctx, c, usageError{flagError(err)}, stderr)
	}
	return report(ctx, c, c.run(ctx, c.flags.Args(), stdout, stderr), stderr)
}

// report prints err once (with a usage hint for usage errors) and returns
// its exit status.
func report(ctx context.Context, c *command, err error, stderr io.Writer) int {
	code := exitCode(ctx, err)
	switch {
	case code == exitOK:
		return code
	case code == exitInterrupted:
		fmt.Fprintf(stderr, "spillway %s: interrupted\n", c.name)
		return code
	}
	fmt.Fprintf(stderr, "spillway %s: %v\n", c.name, err)
	var ue usageError
	if errors.As(err, &ue) {
		fmt.Fprintf(stderr, "Run 'spillway help %s' for usage.\n", c.name)
	}
	return code
}

// exitCode is the one table from errors to exit statuses: nil is 0; a
// cancelled context (SIGINT, SIGTERM) is 130; a usage error, a bad-data
// error (badData) or a *data.DataError anywhere in the chain is 2; anything
// else is 1.
func exitCode(ctx context.Context, err error) int {
	var (
		ue usageError
		bd badDataError
		de *data.DataError
	)
	switch {
	case err == nil:
		return exitOK
	case errors.Is(err, context.Canceled) || (ctx != nil && ctx.Err() != nil):
		return exitInterrupted
	case errors.As(err, &ue), errors.As(err, &bd), errors.As(err, &de):
		return exitUsage
	}
	return exitFailure
}

// usageError marks a command-line mistake (exit status 2, with a hint to
// read the help).
type usageError struct{ err error }

func (e usageError) Error() string { return e.err.Error() }
func (e usageError) Unwrap() error { return e.err }

// usagef returns a usage error with a formatted message.
func usagef(format string, args ...any) error {
	return usageError{fmt.Errorf(format, args...)}
}

// badDataError marks an error in the user's input files (exit status 2).
type badDataError struct{ err error }

func (e badDataError) Error() string { return e.err.Error() }
func (e badDataError) Unwrap() error { return e.err }

// badData marks err as a problem with the user's input (a data, spec,
// priors or other input file), so that it exits with status 2. A nil err
// stays nil.
func badData(err error) error {
	if err == nil {
		return nil
	}
	return badDataError{err}
}

// noArgs returns a usage error when a command that takes no arguments got
// some.
func noArgs(args []string) error {
	if len(args) > 0 {
		return usagef("unexpected argument %q (this command takes flags only)", args[0])
	}
	return nil
}

// flagError rewrites a pflag parse error as a short message.
func flagError(err error) error {
	var (
		ne *pflag.NotExistError
		vr *pflag.ValueRequiredError
		iv *pflag.InvalidValueError
		is *pflag.InvalidSyntaxError
	)
	switch {
	case errors.As(err, &ne):
		if ne.GetSpecifiedShortnames() != "" && ne.GetSpecifiedName() != "" {
			return fmt.Errorf("unknown flag -%s", ne.GetSpecifiedName()[:1])
		}
		return fmt.Errorf("unknown flag --%s", ne.GetSpecifiedName())
	case errors.As(err, &vr):
		return fmt.Errorf("flag --%s needs a value", vr.GetFlag().Name)
	case errors.As(err, &iv):
		cause := iv.Unwrap()
		msg := ""
		if cause != nil {
			msg = ": " + cause.Error()
		}
		return fmt.Errorf("invalid value %q for --%s%s", iv.GetValue(), iv.GetFlag().Name, msg)
	case errors.As(err, &is):
		return fmt.Errorf("bad flag syntax %q", is.GetSpecifiedFlag())
	}
	return err
}

// resetFlags sets every flag of fs back to its default and marks it
// unchanged, so that a command can be parsed again. Slice flags are wrapped
// on first sight in a resettableSlice, because pflag's own slice values
// append rather than replace once they have been set. Function flags are
// left alone (setting them would run the function).
func resetFlags(fs *pflag.FlagSet) {
	fs.VisitAll(func(f *pflag.Flag) {
		switch v := f.Value.(type) {
		case *resettableSlice:
			v.reset()
		case pflag.SliceValue:
			f.Value = &resettableSlice{Value: f.Value, slice: v, def: slices.Clone(v.GetSlice())}
		default:
			if t := f.Value.Type(); t != "func" && t != "boolfunc" {
				_ = f.Value.Set(f.DefValue)
			}
		}
		f.Changed = false
	})
}

// resettableSlice wraps a pflag slice value so that its first Set after a
// reset replaces the default and later ones append, however often the flag
// set is parsed.
type resettableSlice struct {
	pflag.Value
	slice   pflag.SliceValue
	def     []string
	changed bool
}

// Set parses val with the wrapped value's own syntax, then replaces (first
// time) or appends to the current list.
func (r *resettableSlice) Set(val string) error {
	prev := slices.Clone(r.slice.GetSlice())
	if err := r.slice.Replace([]string{}); err != nil {
		return err
	}
	if err := r.Value.Set(val); err != nil {
		_ = r.slice.Replace(prev)
		return err
	}
	if r.changed {
		if err := r.slice.Replace(append(prev, r.slice.GetSlice()...)); err != nil {
			return err
		}
	}
	r.changed = true
	return nil
}

func (r *resettableSlice) reset() {
	_ = r.slice.Replace(slices.Clone(r.def))
	r.changed = false
}

// spillwayVersion returns the version to print.
func spillwayVersion() string {
	if version != "" {
		return version
	}
	if bi, ok := debug.ReadBuildInfo(); ok && bi.Main.Version != "" {
		return bi.Main.Version
	}
	return "(devel)"
}
