// Command filigree turns a galaxy redshift survey into a cosmic-web catalogue:
// density, web environment and reconstructed origin for every galaxy. This
// package only parses flags and wires the library packages together; see
// the README for the commands and their options.
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"

	"github.com/spf13/pflag"
)

// command is one sub-command.
type command struct {
	name    string
	summary string // one line for the command list
	usage   string // argument synopsis after the command name
	example string // worked example(s) for --help
	run     func(a *app, fs *pflag.FlagSet, args []string) error
	flags   func(a *app, fs *pflag.FlagSet) // registers the command's own flags
}

var commands = map[string]*command{}

func register(c *command) { commands[c.name] = c }

// app carries what every command shares: the output streams, the original
// command line for provenance, the progress reporter and the summary file.
type app struct {
	stdout, stderr io.Writer
	argv           []string
	quiet          bool
	summaryPath    string
	progress       *Progress
	summary        *Summary
}

// exit statuses (design: conventions).
const (
	exitOK    = 0
	exitFail  = 1
	exitUsage = 2
)

// usageError is a mistake on the command line; it exits with status 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error { return &usageError{fmt.Sprintf(format, args...)} }

func main() {
	os.Exit(runMain(os.Args, os.Stdout, os.Stderr))
}

// runMain runs the command line args (args[0] is the program name) and
// returns the exit status. Tests call it directly.
func runMain(args []string, stdout, stderr io.Writer) int {
	a := &app{stdout: stdout, stderr: stderr, argv: args}
	if len(args) < 2 {
		topUsage(stderr)
		return exitUsage
	}
	name := args[1]
	switch name {
	case "-h", "--help", "help":
		if len(args) > 2 {
			if c, ok := commands[args[2]]; ok {
				fs := a.flagSet(c)
				fmt.Fprint(stdout, commandHelp(c, fs))
				return exitOK
			}
		}
		topUsage(stdout)
		return exitOK
	case "--version":
		name = "version"
	}
	c, ok := commands[name]
	if !ok {
		fmt.Fprintf(stderr, "filigree: unknown command %q\n", name)
		fmt.Fprintf(stderr, "Run 'filigree --help' for the list of commands.\n")
		return exitUsage
	}
	fs := a.flagSet(c)
	if err := fs.Parse(args[2:]); err != nil {
		if errors.Is(err, pflag.ErrHelp) {
			fmt.Fprint(stdout, commandHelp(c, fs))
			return exitOK
		}
		fmt.Fprintf(stderr, "filigree %s: %v\n", c.name, err)
		fmt.Fprintf(stderr, "usage: filigree %s %s\nRun 'filigree %s --help' for details.\n", c.name, c.usage, c.name)
		return exitUsage
	}
	a.progress = NewProgress(stderr, a.quiet)
	if a.summaryPath != "" {
		a.summary = NewSummary(c.name)
	}
	err := c.run(a, fs, fs.Args())
	a.progress.Finish()
	if err == nil && a.summary != nil {
		err = a.summary.Write(a.summaryPath)
	}
	return report(a, c, err)
}

// report prints err in the single error style and returns the exit status.
func report(a *app, c *command, err error) int {
	if err == nil {
		return exitOK
	}
	var ue *usageError
	if errors.As(err, &ue) {
		fmt.Fprintf(a.stderr, "filigree %s: %s\n", c.name, ue.msg)
		fmt.Fprintf(a.stderr, "usage: filigree %s %s\nRun 'filigree %s --help' for details.\n", c.name, c.usage, c.name)
		return exitUsage
	}
	fmt.Fprintf(a.stderr, "filigree %s: error: %s\n", c.name, indentLines(err.Error()))
	return exitFail
}

func indentLines(s string) string { return strings.ReplaceAll(s, "\n", "\n  ") }

// flagSet builds the flag set of c with the flags shared by every command.
func (a *app) flagSet(c *command) *pflag.FlagSet {
	fs := pflag.NewFlagSet("filigree "+c.name, pflag.ContinueOnError)
	fs.SetOutput(io.Discard) // errors are printed by runMain in one style
	fs.SortFlags = false
	if c.flags != nil {
		c.flags(a, fs)
	}
	fs.BoolVarP(&a.quiet, "quiet", "q", false, "no progress display on stderr")
	fs.StringVar(&a.summaryPath, "summary", "", "write a machine-readable summary of the run to this JSON file")
	return fs
}

func commandHelp(c *command, fs *pflag.FlagSet) string {
	var b strings.Builder
	fmt.Fprintf(&b, "filigree %s: %s\n\nUsage:\n  filigree %s %s\n\nOptions:\n%s", c.name, c.summary, c.name, c.usage, fs.FlagUsagesWrapped(100))
	if c.example != "" {
		fmt.Fprintf(&b, "\nExample:\n%s\n", strings.TrimRight(c.example, "\n"))
	}
	return b.String()
}

func topUsage(w io.Writer) {
	fmt.Fprintf(w, "filigree: the cosmic-web environment and reconstructed origin of every galaxy in a redshift survey\n\nUsage:\n  filigree COMMAND [options] [arguments]\n\nCommands:\n")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, commands[n].summary)
	}
	fmt.Fprintf(w, "\nRun 'filigree COMMAND --help' for a command's options and an example.\n")
}
