// Command spillway fits a two-stage Bayesian mediation model on weekly
// marketing data: upper-funnel spend (video, audio) lifts branded search
// demand, and the outcome depends on queries, paid search and the upper
// funnel directly. Run 'spillway help' for the commands.
//
// Each command lives in its own cmd_NAME.go file, built by a newNAMECommand
// constructor; main.go holds the list of commands, the dispatch, the help
// and the one table of exit codes (exitCode).
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"regexp"
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
	exitInterrupted = 130 // SIGINT (128 + 2), or a cancel without a signal; nothing half-written was left
)

// exitStatusHelp is the EXIT STATUS section every command's long help ends
// with.
const exitStatusHelp = `EXIT STATUS
  0    success
  1    failure: the work could not be done
  2    bad usage or bad data (the message names the file, line and column);
       nothing is written
  129, 130, 131, 141, 143
       stopped by a signal (128 + its number: SIGHUP, SIGINT, SIGQUIT,
       SIGPIPE, SIGTERM); nothing half-written is left behind`

// version is set at build time with -ldflags "-X main.version=v1.2.3"; when
// empty the module version from the build information is used.
var version = ""

func main() {
	ctx, stop := notifyContext(context.Background())
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// stopSignals are the signals that stop spillway cleanly: the context is
// cancelled with a signalCause, the command removes its temporary output
// and spillway exits with 128 + the signal's number. SIGKILL and SIGSTOP
// cannot be caught; a later run removes what a killed run left.
var stopSignals = []os.Signal{syscall.SIGHUP, syscall.SIGINT, syscall.SIGQUIT, syscall.SIGPIPE, syscall.SIGTERM}

// signalCause is the cause of a context cancelled by a signal.
type signalCause struct{ sig syscall.Signal }

func (c signalCause) Error() string { return "stopped by signal " + c.sig.String() }

// Is makes a signal stop match context.Canceled, like a plain cancel.
func (c signalCause) Is(target error) bool { return target == context.Canceled }

// notifyContext returns a context cancelled, with a signalCause, by the
// first of stopSignals. A second SIGHUP, SIGINT, SIGQUIT or SIGTERM ends
// the process at once (the default action). SIGPIPE stays caught: once a
// reader of standard output or error has gone, writes there must fail with
// an error rather than kill the process before it has cleaned up.
func notifyContext(parent context.Context) (context.Context, func()) {
	ctx, cancel := context.WithCancelCause(parent)
	ch := make(chan os.Signal, 1)
	signal.Notify(ch, stopSignals...)
	done := make(chan struct{})
	go func() {
		select {
		case s := <-ch:
			sig, _ := s.(syscall.Signal)
			cancel(signalCause{sig})
			signal.Reset(syscall.SIGHUP, syscall.SIGINT, syscall.SIGQUIT, syscall.SIGTERM)
			for range ch { // later SIGPIPEs
			}
		case <-done:
		}
	}()
	return ctx, func() {
		signal.Stop(ch)
		close(done)
		cancel(nil)
	}
}

// command is one subcommand. Files cmd_NAME.go build one with a
// constructor that binds a fresh options struct to a fresh flag set, for
// example:
//
//	func newFitCommand() *command {
//		var opts fitOptions // roles roleFlags; sampling samplingFlags
//		fs := newFlagSet("fit")
//		opts.addFlags(fs) // calls opts.roles.addFlags(fs), adds --out, --force, ...
//		return &command{name: "fit", usage: "fit --out FOLDER (role flags) [flags]",
//			short: "fit both stages", long: "...\n\nEXAMPLE\n  spillway fit ...\n\n" + exitStatusHelp,
//			flags: fs,
//			run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
//				return runFitCommand(ctx, &opts, args, stdout, stderr)
//			}}
//	}
//
// No flag value lives in a package variable: every run of spillway (and
// every test) builds its commands anew and parses into flags of its own.
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
	// flags is made with newFlagSet(name) and parsed once.
	flags *pflag.FlagSet
	// run does the work with the arguments left after the flags. Its
	// error is printed once as "spillway NAME: message"; wrap errors with
	// usagef or badData to choose the exit status (see exitCode).
	run func(ctx context.Context, args []string, stdout, stderr io.Writer) error
}

// newCommands builds every command afresh, in the order 'spillway help'
// lists them.
func newCommands() []*command {
	return []*command{newRunCommand(), newSimulateCommand(), newInspectCommand(), newFitCommand(),
		newSplitCommand(), newAllocateCommand(), newChartCommand(), newReportCommand(), newValidateCommand()}
}

// newFlagSet returns an empty flag set for the command name. It prints
// nothing itself (run reports parse errors) and keeps the flags in the
// order they were added, for the help.
func newFlagSet(name string) *pflag.FlagSet {
	fs := pflag.NewFlagSet(name, pflag.ContinueOnError)
	fs.SetOutput(io.Discard)
	fs.Usage = func() {}
	fs.SortFlags = false
	return fs
}

// find returns the command of cmds called name, or nil.
func find(cmds []*command, name string) *command {
	if i := slices.IndexFunc(cmds, func(c *command) bool { return c.name == name }); i >= 0 {
		return cmds[i]
	}
	return nil
}

// run is the testable entry point: it builds the commands, runs the one
// named by args[0] and returns the exit status.
func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	return runCommands(ctx, newCommands(), args, stdout, stderr)
}

// runCommands runs the command of cmds named by args[0] and returns the
// exit status.
func runCommands(ctx context.Context, cmds []*command, args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		writeTopHelp(stderr, cmds)
		return exitUsage
	}
	name := args[0]
	switch name {
	case "help", "-h", "--help", "-help":
		return runHelp(cmds, args[1:], stdout, stderr)
	case "version", "--version":
		v := spillwayVersion()
		fmt.Fprintf(stdout, "spillway %s\n", v)
		if v == "(devel)" {
			fmt.Fprintln(stderr, "spillway: this build carries no version: it was built by go run or without version control information (-buildvcs=false); go install ./cmd/spillway in a git clone records the commit")
		}
		return exitOK
	}
	c := find(cmds, name)
	if c == nil {
		if strings.HasPrefix(name, "-") {
			fmt.Fprintf(stderr, "spillway: unknown flag %s\n", name)
		} else {
			fmt.Fprintf(stderr, "spillway: unknown command %q", name)
			best, bestD := "", 0
			for _, c := range cmds {
				if d := editDistance(strings.ToLower(name), c.name); d <= 1+len(name)/6 && (best == "" || d < bestD) {
					best, bestD = c.name, d
				}
			}
			if best != "" {
				fmt.Fprintf(stderr, "; did you mean %s?", best)
			}
			fmt.Fprintln(stderr)
		}
		fmt.Fprintf(stderr, "Run 'spillway help' for usage.\n")
		return exitUsage
	}
	if err := c.flags.Parse(args[1:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			writeCommandHelp(stdout, c)
			return exitOK
		}
		return report(ctx, c, usageError{flagError(c.flags, err)}, stderr)
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
	case code > 128:
		fmt.Fprintf(stderr, "spillway %s: interrupted\n", c.name)
		return code
	}
	fmt.Fprintf(stderr, "spillway %s: %s\n", c.name, userMessage(err.Error()))
	var ue usageError
	if errors.As(err, &ue) {
		fmt.Fprintf(stderr, "Run 'spillway help %s' for usage.\n", c.name)
	}
	return code
}

// internalPrefix matches the package-name prefixes that spillway's
// library packages put on their errors (gonum's convention, "mcmc: chain
// 1: ..."), at the start of a message or after another prefix. They mean
// nothing to a user, who sees "spillway fit: " in front instead.
var internalPrefix = regexp.MustCompile(`(^|: )(?:(?:fitdir|fitfolder|fitfoldertest|mediation|mcmc|model|pipeline|scenario|plots|forward|table|window|validate|validation|stat|transform|ols|score|report|htmlreport|progress): )+`)

// userMessage removes internal package names from an error message.
func userMessage(msg string) string {
	return internalPrefix.ReplaceAllString(msg, "$1")
}

// exitCode is the one table from errors to exit statuses: nil is 0; a
// context cancelled by a signal is 128 + the signal's number (SIGINT 130,
// SIGTERM 143, SIGHUP 129, SIGQUIT 131, SIGPIPE 141), otherwise 130; a
// write to a closed pipe is 141, as if SIGPIPE had stopped it; a usage
// error, a bad-data error (badData) or a *data.DataError anywhere in the
// chain is 2; anything else is 1.
func exitCode(ctx context.Context, err error) int {
	var (
		ue usageError
		bd badDataError
		de *data.DataError
		sc signalCause
	)
	switch {
	case err == nil:
		return exitOK
	case ctx != nil && errors.As(context.Cause(ctx), &sc):
		return 128 + int(sc.sig)
	case errors.Is(err, syscall.EPIPE):
		return 128 + int(syscall.SIGPIPE)
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

// flagError rewrites a pflag parse error of fs as a short message; an
// unknown flag gets the nearest flag name of fs as a suggestion.
func flagError(fs *pflag.FlagSet, err error) error {
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
		name := ne.GetSpecifiedName()
		if near := nearestFlag(fs, name); near != "" {
			return fmt.Errorf("unknown flag --%s; did you mean --%s?", name, near)
		}
		return fmt.Errorf("unknown flag --%s", name)
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

// nearestFlag returns the flag of fs closest to name in edit distance
// (a typo: at most one edit for short names, two from six letters, three
// from twelve), or a flag that name is the start of, or "" when none is
// close. Ties go to the flag added first.
func nearestFlag(fs *pflag.FlagSet, name string) string {
	best, bestD := "", 0
	limit := 1 + len(name)/6
	fs.VisitAll(func(f *pflag.Flag) {
		if f.Hidden {
			return
		}
		d := editDistance(strings.ToLower(name), f.Name)
		if len(name) >= 3 && strings.HasPrefix(f.Name, name) {
			d = min(d, 1)
		}
		if d <= limit && (best == "" || d < bestD) {
			best, bestD = f.Name, d
		}
	})
	return best
}

// editDistance is the Levenshtein distance between a and b, by bytes.
func editDistance(a, b string) int {
	prev := make([]int, len(b)+1)
	cur := make([]int, len(b)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(a); i++ {
		cur[0] = i
		for j := 1; j <= len(b); j++ {
			sub := prev[j-1]
			if a[i-1] != b[j-1] {
				sub++
			}
			cur[j] = min(sub, prev[j]+1, cur[j-1]+1)
		}
		prev, cur = cur, prev
	}
	return prev[len(b)]
}

// spillwayVersion returns the version to print: the -X main.version set
// at link time, else what the build recorded (versionOf).
func spillwayVersion() string {
	if version != "" {
		return version
	}
	bi, _ := debug.ReadBuildInfo()
	return versionOf(bi)
}

// versionOf returns the version a build recorded: the main module's
// version when it has one (go install spillway@v1.2.0, or a build in a
// tagged checkout), else the commit it was built from with the commit's
// time, marked +dirty when the working tree had changes (a build in a git
// clone), else "(devel)" with a hint (go run, or a build without version
// control information; 'spillway version' then says so).
func versionOf(bi *debug.BuildInfo) string {
	if bi == nil {
		return "(devel)"
	}
	if v := bi.Main.Version; v != "" && v != "(devel)" {
		return v
	}
	var rev, at, dirty string
	for _, s := range bi.Settings {
		switch s.Key {
		case "vcs.revision":
			rev = s.Value
		case "vcs.time":
			at = s.Value
		case "vcs.modified":
			if s.Value == "true" {
				dirty = "+dirty"
			}
		}
	}
	if rev == "" {
		return "(devel)"
	}
	if len(rev) > 12 {
		rev = rev[:12]
	}
	v := "commit " + rev + dirty
	if at != "" {
		v += " (" + at + ")"
	}
	return v
}
