package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"regexp"
	"runtime/debug"
	"slices"
	"strings"
	"syscall"
	"testing"

	"spillway/funnel/data"
)

// writetestOptions are the flags of writetest, a test-only command that
// shows the output mechanism: it loads data through roleFlags, then writes
// the data back into an atomic output folder and commits it. With
// --fail-after-write it fails after writing (as a real command might
// mid-way); a cancelled context stops it before the commit.
type writetestOptions struct {
	roles          roleFlags
	out            string
	force          bool
	failAfterWrite bool
}

func newWritetestCommand() *command {
	var o writetestOptions
	fs := newFlagSet("writetest")
	o.roles.addFlags(fs)
	fs.StringVar(&o.out, "out", "", "output `FOLDER`")
	fs.BoolVar(&o.force, "force", false, "replace an existing output folder")
	fs.BoolVar(&o.failAfterWrite, "fail-after-write", false, "fail after writing (test)")
	return &command{
		name: "writetest", usage: "writetest --out FOLDER (role flags)", short: "test-only: copy the data into a folder",
		long:  "Writetest copies the data into an output folder.\n\nEXAMPLE\n  spillway writetest --out x --data d.csv ...\n\n" + exitStatusHelp,
		flags: fs,
		run: func(ctx context.Context, args []string, stdout, stderr io.Writer) error {
			if err := noArgs(args); err != nil {
				return err
			}
			od, err := newOutDir(o.out, o.force) // before any work
			if err != nil {
				return err
			}
			defer od.Abort()
			d, err := o.roles.load()
			if err != nil {
				return err
			}
			var buf bytes.Buffer
			if err := data.WriteCSV(&buf, d); err != nil {
				return err
			}
			if err := od.WriteFile("data/copy.csv", buf.Bytes()); err != nil {
				return err
			}
			if o.failAfterWrite {
				return errors.New("failed on purpose after writing")
			}
			if err := ctx.Err(); err != nil {
				return err
			}
			return od.Commit()
		},
	}
}

// testCommands are spillway's commands and writetest, built afresh.
func testCommands() []*command {
	return append(newCommands(), newWritetestCommand())
}

// runCmd runs spillway with args and returns the exit status and outputs.
func runCmd(t *testing.T, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	return runCtx(t, context.Background(), args...)
}

func runCtx(t *testing.T, ctx context.Context, args ...string) (code int, stdout, stderr string) {
	t.Helper()
	var out, errb bytes.Buffer
	code = runCommands(ctx, testCommands(), args, &out, &errb)
	return code, out.String(), errb.String()
}

func TestHelp(t *testing.T) {
	for _, args := range [][]string{{"help"}, {"--help"}, {"-h"}} {
		code, out, errs := runCmd(t, args...)
		if code != 0 || errs != "" || !strings.Contains(out, "Commands:\n") || !regexp.MustCompile(`\n  inspect +check and summarise a data file\n`).MatchString(out) {
			t.Errorf("%v: got %d, stdout %q, stderr %q", args, code, out, errs)
		}
	}
	for _, args := range [][]string{{"help", "inspect"}, {"inspect", "--help"}, {"inspect", "-h"}} {
		code, out, errs := runCmd(t, args...)
		if code != 0 || errs != "" || !strings.HasPrefix(out, "Usage: spillway inspect --data FILE") {
			t.Errorf("%v: got %d, stdout %q, stderr %q", args, code, out, errs)
		}
		// Flags come between the description and the example, in the order added.
		iFlags, iEx, iExit := strings.Index(out, "FLAGS\n"), strings.Index(out, "EXAMPLE\n"), strings.Index(out, "EXIT STATUS\n")
		if !(0 < iFlags && iFlags < iEx && iEx < iExit) {
			t.Errorf("%v: sections out of order:\n%s", args, out)
		}
		if strings.Index(out, "--data FILE") > strings.Index(out, "--spec FILE") {
			t.Errorf("%v: flags not in the order added:\n%s", args, out)
		}
	}
	if code, out, errs := runCmd(t); code != exitUsage || out != "" || !strings.Contains(errs, "Usage:\n  spillway COMMAND") {
		t.Errorf("no arguments: got %d, stdout %q, stderr %q; want 2 and the command list on stderr", code, out, errs)
	}
}

func TestEveryCommandDocumentsExitStatus(t *testing.T) {
	seen := map[string]bool{}
	for _, c := range testCommands() {
		if c.name == "" || strings.HasPrefix(c.name, "-") || seen[c.name] || c.flags == nil || c.run == nil {
			t.Errorf("command %q: empty or repeated name, or no flags or run function", c.name)
		}
		seen[c.name] = true
		if !strings.Contains(c.long, "EXIT STATUS") || !strings.Contains(c.long, "EXAMPLE") {
			t.Errorf("%s: long help lacks EXAMPLE or EXIT STATUS", c.name)
		}
		if c.short == "" || c.usage == "" {
			t.Errorf("%s: no short help or usage", c.name)
		}
		if !strings.HasPrefix(c.usage, c.name) {
			t.Errorf("%s: usage %q does not start with the command name", c.name, c.usage)
		}
		code, out, _ := runCmd(t, "help", c.name)
		if code != 0 || !strings.Contains(out, "EXIT STATUS\n") {
			t.Errorf("help %s: got %d", c.name, code)
		}
	}
}

func TestUsageErrors(t *testing.T) {
	tests := []struct {
		args []string
		want string // the whole of stderr
	}{
		{[]string{"fitt"}, "spillway: unknown command \"fitt\"; did you mean fit?\nRun 'spillway help' for usage.\n"},
		{[]string{"--frobnicate"}, "spillway: unknown flag --frobnicate\nRun 'spillway help' for usage.\n"},
		{[]string{"inspect", "--foo"}, "spillway inspect: unknown flag --foo\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"inspect", "--foo=1"}, "spillway inspect: unknown flag --foo\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"inspect", "-x"}, "spillway inspect: unknown flag -x\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"inspect", "--data"}, "spillway inspect: flag --data needs a value\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"inspect", "extra"}, "spillway inspect: unexpected argument \"extra\" (this command takes flags only)\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"inspect"}, "spillway inspect: no data file: name it with --data FILE (or \"data\" in the spec file)\nRun 'spillway help inspect' for usage.\n"},
		{[]string{"help", "nope"}, "spillway help: unknown command \"nope\"\nRun 'spillway help' for usage.\n"},
		{[]string{"writetest", "--fail-after-write=maybe"}, "spillway writetest: invalid value \"maybe\" for --fail-after-write: must be true or false\nRun 'spillway help writetest' for usage.\n"},
	}
	for _, test := range tests {
		code, out, errs := runCmd(t, test.args...)
		if code != exitUsage || out != "" || errs != test.want {
			t.Errorf("%v: got %d, stdout %q, stderr %q; want 2 and stderr %q", test.args, code, out, errs, test.want)
		}
	}
}

func TestVersion(t *testing.T) {
	code, out, _ := runCmd(t, "--version")
	if code != 0 || !strings.HasPrefix(out, "spillway ") {
		t.Errorf("got %d %q", code, out)
	}
}

// TestVersionOf: the version comes from the build's module information:
// the module version, else the commit and its time, else a plain devel.
func TestVersionOf(t *testing.T) {
	vcs := []debug.BuildSetting{{Key: "vcs", Value: "git"}, {Key: "vcs.revision", Value: "5e920a2c0ffee0123456789abcdef0123456789a"},
		{Key: "vcs.time", Value: "2026-12-02T06:00:00Z"}, {Key: "vcs.modified", Value: "false"}}
	dirty := append(slices.Clone(vcs[:3]), debug.BuildSetting{Key: "vcs.modified", Value: "true"})
	for _, c := range []struct {
		bi   *debug.BuildInfo
		want string
	}{
		{&debug.BuildInfo{Main: debug.Module{Version: "v1.2.0"}, Settings: vcs}, "v1.2.0"},
		{&debug.BuildInfo{Main: debug.Module{Version: "v0.0.0-20261202060000-5e920a2c0ffe+dirty"}}, "v0.0.0-20261202060000-5e920a2c0ffe+dirty"},
		{&debug.BuildInfo{Main: debug.Module{Version: "(devel)"}, Settings: vcs}, "commit 5e920a2c0ffe (2026-12-02T06:00:00Z)"},
		{&debug.BuildInfo{Main: debug.Module{Version: "(devel)"}, Settings: dirty}, "commit 5e920a2c0ffe+dirty (2026-12-02T06:00:00Z)"},
		{&debug.BuildInfo{Main: debug.Module{Version: "(devel)"}}, "(devel)"},
		{nil, "(devel)"},
	} {
		if got := versionOf(c.bi); got != c.want {
			t.Errorf("got %q, want %q", got, c.want)
		}
	}
}

// TestDidYouMean: a mistyped flag or command gets the nearest name.
func TestDidYouMean(t *testing.T) {
	for _, c := range []struct {
		args []string
		want string
	}{
		{[]string{"run", "--outt", "x"}, "spillway run: unknown flag --outt; did you mean --out?\n"},
		{[]string{"fit", "--uper", "video"}, "spillway fit: unknown flag --uper; did you mean --upper?\n"},
		{[]string{"validate", "--replicate", "3"}, "spillway validate: unknown flag --replicate; did you mean --replicates?\n"},
		{[]string{"run", "--windw", "all"}, "spillway run: unknown flag --windw; did you mean --window?\n"},
		{[]string{"run", "--zzzzzz"}, "spillway run: unknown flag --zzzzzz\n"},
		{[]string{"inspct"}, "spillway: unknown command \"inspct\"; did you mean inspect?\n"},
	} {
		code, _, stderr := runCmd(t, c.args...)
		if code != exitUsage || !strings.HasPrefix(stderr, c.want) {
			t.Errorf("%v: exit %d, stderr %q; want 2 and %q", c.args, code, stderr, c.want)
		}
	}
}

// TestMissingRolesAtOnce: every missing role is named in one message.
func TestMissingRolesAtOnce(t *testing.T) {
	code, _, stderr := runCmd(t, "inspect", "--data", "sales.csv", "--upper", "video")
	want := "spillway inspect: 4 roles are missing: --date COLUMN (week start), --search COLUMNS (paid-search spend), --queries COLUMN (branded query volume), --outcome COLUMN (the outcome)"
	if code != exitUsage || !strings.HasPrefix(stderr, want) {
		t.Errorf("exit %d, stderr %q; want 2 and %q", code, stderr, want)
	}
}

// TestUserMessage: messages on stderr carry no internal package names.
func TestUserMessage(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{"mcmc: chain 2: numerical overflow in metric adaptation", "chain 2: numerical overflow in metric adaptation"},
		{"validate: reference fit: mcmc: chain 1: Init failed", "reference fit: chain 1: Init failed"},
		{"f/effects.csv: fitfolder: file is missing (written by spillway split; run it first)", "f/effects.csv: file is missing (written by spillway split; run it first)"},
		{"report: validation: render validation.png: x", "render validation.png: x"},
		{"fitdir: spec.json: bad", "spec.json: bad"},
		{"--window: \"x\" is not all", "--window: \"x\" is not all"},
		{"sales.csv:3:2: column \"model: x\" is not a number", "sales.csv:3:2: column \"model: x\" is not a number"},
	} {
		if got := userMessage(c.in); got != c.want {
			t.Errorf("userMessage(%q) = %q, want %q", c.in, got, c.want)
		}
	}
	// through a command: a fit folder without its split
	dir := t.TempDir()
	writeFileIn(t, dir, "spec.json", "{}")
	code, _, stderr := runCmd(t, "chart", "--fit", dir)
	if code == 0 || internalPrefix.MatchString(strings.TrimPrefix(stderr, "spillway chart: ")) {
		t.Errorf("chart on an incomplete folder: exit %d, stderr %q", code, stderr)
	}
}

func TestExitCode(t *testing.T) {
	de := &data.DataError{File: "a.csv", Line: 2, Err: errors.New("bad")}
	cancelled, cancel := context.WithCancel(context.Background())
	cancel()
	byTerm, stop := context.WithCancelCause(context.Background())
	stop(signalCause{syscall.SIGTERM})
	byHup, stop2 := context.WithCancelCause(context.Background())
	stop2(signalCause{syscall.SIGHUP})
	tests := []struct {
		name string
		ctx  context.Context
		err  error
		want int
	}{
		{"nil", context.Background(), nil, 0},
		{"other", context.Background(), errors.New("disk full"), 1},
		{"usage", context.Background(), usagef("no --out"), 2},
		{"bad data", context.Background(), badData(errors.New("priors.json:3: bad prior")), 2},
		{"data error", context.Background(), de, 2},
		{"wrapped data error", context.Background(), fmt.Errorf("load: %w", de), 2},
		{"canceled", context.Background(), fmt.Errorf("sampling: %w", context.Canceled), 130},
		{"error after cancel", cancelled, errors.New("write: broken"), 130},
		{"SIGTERM", byTerm, context.Cause(byTerm), 143},
		{"error after SIGHUP", byHup, errors.New("write: broken"), 129},
		{"closed pipe", context.Background(), fmt.Errorf("write stdout: %w", syscall.EPIPE), 141},
		{"SIGTERM is a cancel", context.Background(), fmt.Errorf("x: %w", signalCause{syscall.SIGTERM}), 130},
	}
	for _, test := range tests {
		if got := exitCode(test.ctx, test.err); got != test.want {
			t.Errorf("%s: got %d, want %d", test.name, got, test.want)
		}
	}
	if badData(nil) != nil {
		t.Error("badData(nil) is not nil")
	}
}

// TestFlagsReset checks that flags parsed in one run do not leak into the
// next, and that repeated slice flags append.
func TestFlagsReset(t *testing.T) {
	path := writeFile(t, "data.csv", cmdFrame(60).csv())
	// A column the file lacks fails only while it is asked for.
	code, _, errs := runCmd(t, inspectArgs(path, "--controls", "price", "--controls", "missing")...)
	if code != exitUsage || !strings.Contains(errs, `column "missing": not in the header (asked for by --controls)`) {
		t.Fatalf("repeated --controls: got %d %q", code, errs)
	}
	code, out, errs := runCmd(t, inspectArgs(path)...)
	if code != 0 || strings.Contains(out, "price") {
		t.Fatalf("second run (no --controls): got %d, stderr %q, price in output: %v", code, errs, strings.Contains(out, "price"))
	}
	code, out, _ = runCmd(t, inspectArgs(path, "--controls", "price")...)
	if code != 0 || !strings.Contains(out, "price") {
		t.Fatalf("third run: got %d", code)
	}
}

func TestInspect(t *testing.T) {
	f := cmdFrame(60)
	f.set(30, "sales", "900000") // an outlier
	path := writeFile(t, "data.csv", f.csv())
	code, out, errs := runCmd(t, inspectArgs(path, "--controls", "price")...)
	if code != 0 {
		t.Fatalf("got %d: %s", code, errs)
	}
	for _, want := range []string{"File:     " + path + "\n", "Weeks:    60 (2023-01-02 to 2024-02-19)\n", "Regions:  none (national data)\n", "Warnings: 1\n"} {
		if !strings.Contains(out, want) {
			t.Errorf("stdout lacks %q:\n%s", want, out)
		}
	}
	if want := "spillway inspect: warning: \"sales\" has 1 week more than 5 robust standard deviations from its median"; !strings.HasPrefix(errs, want) || strings.Count(errs, "\n") != 1 {
		t.Errorf("stderr: got %q, want one line starting %q", errs, want)
	}
}

func TestSpecFile(t *testing.T) {
	dir := t.TempDir()
	writeFileIn(t, dir, "data.csv", cmdFrame(60).csv())
	spec := writeFileIn(t, dir, "spec.json", `{"data": "data.csv", "date": "week", "upper": ["video", "audio"],
  "search": ["search"], "queries": "queries", "outcome": "sales", "controls": ["nope"]}`)
	// The spec's "nope" control is overridden by the flag.
	code, out, errs := runCmd(t, "inspect", "--spec", spec, "--controls", "price")
	if code != 0 || !strings.Contains(out, "price") {
		t.Errorf("spec plus flags: got %d, stderr %q", code, errs)
	}
	code, _, errs = runCmd(t, "inspect", "--spec", spec)
	if code != exitUsage || !strings.Contains(errs, `column "nope": not in the header (asked for by --controls)`) {
		t.Errorf("spec alone: got %d, stderr %q", code, errs)
	}
	bad := writeFileIn(t, dir, "bad.json", "{\n  \"date\": \"week\",\n  \"outcomes\": \"sales\"\n}\n")
	code, _, errs = runCmd(t, "inspect", "--spec", bad)
	if want := "spillway inspect: " + bad + ":3:3: unknown key \"outcomes\""; code != exitUsage || !strings.HasPrefix(errs, want) {
		t.Errorf("bad spec: got %d, stderr %q, want prefix %q", code, errs, want)
	}
}

func writeFile(t *testing.T, name, text string) string {
	t.Helper()
	return writeFileIn(t, t.TempDir(), name, text)
}

func writeFileIn(t *testing.T, dir, name, text string) string {
	t.Helper()
	p := filepath.Join(dir, name)
	if err := os.MkdirAll(filepath.Dir(p), 0o755); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// inspectArgs returns the arguments to inspect path with the roles of
// cmdFrame (no controls unless added) followed by more.
func inspectArgs(path string, more ...string) []string {
	return append([]string{"inspect", "--data", path, "--date", "week", "--upper", "video,audio", "--search", "search",
		"--queries", "queries", "--outcome", "sales"}, more...)
}

// TestCommandsBuiltTwice checks that a command built twice shares no flag
// state: parsing one leaves the other at its defaults; a repeated slice
// flag appends, its first use replacing the default; and the help shows
// slice flags and their defaults as pflag does.
func TestCommandsBuiltTwice(t *testing.T) {
	a, b := newValidateCommand(), newValidateCommand()
	if err := a.flags.Parse([]string{"--leave-out", "2024Q1,2024Q2", "--leave-out", "2024Q3", "--checks", "holdout", "--seed", "9", "--force"}); err != nil {
		t.Fatal(err)
	}
	value := func(c *command, name string) string { return c.flags.Lookup(name).Value.String() }
	if got := []string{value(a, "leave-out"), value(a, "checks"), value(a, "seed"), value(a, "force")}; !slices.Equal(got, []string{"[2024Q1,2024Q2,2024Q3]", "[holdout]", "9", "true"}) {
		t.Fatalf("first command: got %v", got)
	}
	if got := []string{value(b, "leave-out"), value(b, "checks"), value(b, "seed"), value(b, "force")}; !slices.Equal(got, []string{"[]", "[recovery,holdout,stability]", "1", "false"}) || b.flags.Changed("checks") {
		t.Fatalf("second command: got %v, want the defaults", got)
	}
	var help bytes.Buffer
	writeCommandHelp(&help, b)
	// words compared, not line breaks: the wrapping depends on the longest flag
	if u := strings.Join(strings.Fields(help.String()), " "); !strings.Contains(u, "--checks CHECKS") || !strings.Contains(u, "(default [recovery,holdout,stability])") {
		t.Errorf("usage: %s", u)
	}
}
