package main

import (
	"fmt"
	"io"
	"strings"
)

// writeTopHelp writes the list of commands.
func writeTopHelp(w io.Writer, cmds []*command) {
	fmt.Fprint(w, `spillway splits the effect of upper-funnel media (video, audio) on an outcome
into the part that runs through branded search demand and the direct part, and
shows how much of paid search's apparent return is demand borrowed from the
upper funnel.

Usage:
  spillway COMMAND [flags]

Commands:
`)
	width := 0
	for _, c := range cmds {
		width = max(width, len(c.name))
	}
	for _, c := range cmds {
		fmt.Fprintf(w, "  %-*s  %s\n", width, c.name, c.short)
	}
	fmt.Fprint(w, `
Run 'spillway help COMMAND' (or 'spillway COMMAND --help') for a command's
flags, an example and its exit status.
`)
}

// writeCommandHelp writes a command's usage line, its long help and its
// flags, which come before the EXAMPLE section.
func writeCommandHelp(w io.Writer, c *command) {
	fmt.Fprintf(w, "Usage: spillway %s\n\n", c.usage)
	long := strings.TrimSpace(c.long)
	rest := ""
	if i := strings.Index(long, "\nEXAMPLE"); i >= 0 {
		long, rest = strings.TrimSpace(long[:i]), long[i+1:]
	}
	if long != "" {
		fmt.Fprintf(w, "%s\n\n", long)
	}
	if usages := c.flags.FlagUsagesWrapped(80); usages != "" {
		fmt.Fprintf(w, "FLAGS\n%s\n", usages)
	}
	if rest != "" {
		fmt.Fprintf(w, "%s\n", strings.TrimRight(rest, "\n"))
	}
}

// runHelp handles 'spillway help [COMMAND]'.
func runHelp(cmds []*command, args []string, stdout, stderr io.Writer) int {
	switch len(args) {
	case 0:
		writeTopHelp(stdout, cmds)
		return exitOK
	case 1:
		if c := find(cmds, args[0]); c != nil {
			writeCommandHelp(stdout, c)
			return exitOK
		}
		fmt.Fprintf(stderr, "spillway help: unknown command %q\n", args[0])
	default:
		fmt.Fprintf(stderr, "spillway help: too many arguments; expected one command name\n")
	}
	fmt.Fprintf(stderr, "Run 'spillway help' for usage.\n")
	return exitUsage
}
