// Command striate trains and evaluates small CPU-only object recognizers
// built on a fixed V1-like front end.
//
// Usage:
//
//	striate <command> [flags]
//
// Run "striate help" for the list of commands and "striate <command> -h" for
// the flags and examples of one command.
//
// Exit codes: 0 success; 1 the work failed (bad data, a file that cannot be
// read, a target not met where a command checks one); 2 bad usage (unknown
// command or flag, missing argument).
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strings"
)

// Exit codes, documented in the package comment and in README.md.
const (
	exitOK    = 0
	exitFail  = 1
	exitUsage = 2
)

// command is one subcommand. Each lives in its own file and registers
// itself from an init function, so main.go never changes when one is added.
type command struct {
	name    string
	summary string
	usage   string // one line: arguments after the flags
	example string // shown under -h
	// flagsOnly rejects arguments after the flags as a usage error.
	flagsOnly bool
	// setup declares the command's flags on fs and returns the function that
	// runs it with the remaining arguments.
	setup func(fs *flag.FlagSet, g *globals) func(args []string) error
}

var commands = map[string]*command{}

func register(c *command) {
	if _, dup := commands[c.name]; dup {
		panic("striate: command registered twice: " + c.name)
	}
	commands[c.name] = c
}

// usageError marks an error as the caller's fault (exit code 2).
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, a ...any) error { return usageError{fmt.Sprintf(format, a...)} }

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		if len(args) > 1 {
			if c, ok := commands[args[1]]; ok {
				fs, _ := newFlagSet(c, stdout)
				fs.Usage()
				return exitOK
			}
		}
		printHelp(stdout)
		if len(args) == 0 {
			return exitUsage
		}
		return exitOK
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "striate: unknown command %q; run \"striate help\" for the list\n", args[0])
		return exitUsage
	}
	fs, g := newFlagSet(c, stderr)
	runFn := c.setup(fs, g)
	if err := fs.Parse(args[1:]); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			return exitOK
		}
		return exitUsage
	}
	g.stdout, g.stderr = stdout, stderr
	var err error
	if c.flagsOnly && fs.NArg() > 0 {
		err = usagef("unexpected argument %q (%s takes flags only)", fs.Arg(0), c.name)
	} else {
		err = runFn(fs.Args())
	}
	if err != nil {
		fmt.Fprintf(stderr, "striate %s: %v\n", c.name, err)
		var ue usageError
		if errors.As(err, &ue) {
			return exitUsage
		}
		return exitFail
	}
	return exitOK
}

func newFlagSet(c *command, out io.Writer) (*flag.FlagSet, *globals) {
	fs := flag.NewFlagSet("striate "+c.name, flag.ContinueOnError)
	fs.SetOutput(out)
	g := &globals{}
	fs.Usage = func() {
		fmt.Fprintf(out, "striate %s: %s\n\nUsage:\n  striate %s [flags] %s\n\nFlags:\n", c.name, c.summary, c.name, c.usage)
		fs.PrintDefaults()
		if c.example != "" {
			fmt.Fprintf(out, "\nExamples:\n%s\n", strings.TrimRight(c.example, "\n"))
		}
	}
	return fs, g
}

func printHelp(w io.Writer) {
	fmt.Fprintln(w, "striate trains small CPU-only recognizers on a fixed V1-like front end.")
	fmt.Fprintln(w, "\nUsage:\n  striate <command> [flags]\n\nCommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-9s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nRun \"striate <command> -h\" for a command's flags and examples.")
	fmt.Fprintln(w, "Exit codes: 0 success, 1 the work failed, 2 bad usage.")
}
