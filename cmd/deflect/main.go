// Command deflect fits gravitational-lens models directly to interferometric
// visibilities. Run "deflect help" for the list of subcommands.
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

// version is the deflect release, reported by "deflect version" and written
// into every run record.
const version = "0.1.0-dev"

// A command is one deflect subcommand. Each lives in its own file and adds
// itself to the registry from an init function.
type command struct {
	name    string
	summary string // one line for "deflect help"
	usage   string // argument synopsis, e.g. "FILE... [-o DIR]"
	help    string // longer description printed by "deflect NAME -h"
	// setFlags declares the command's flags on fs; it may be nil.
	setFlags func(fs *flag.FlagSet)
	// run executes the command with the positional arguments left after
	// flag parsing. A *usageError means bad usage (exit 2); any other error
	// a failed run (exit 1).
	run func(env *runEnv, args []string) error
}

// runEnv is what a command may touch: its flags and its output streams.
type runEnv struct {
	flags  *flag.FlagSet
	stdout io.Writer
	stderr io.Writer
}

// usageError reports bad command-line usage.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

var registry = map[string]*command{}

func register(c *command) {
	if _, dup := registry[c.name]; dup {
		panic("deflect: command registered twice: " + c.name)
	}
	registry[c.name] = c
}

func main() {
	os.Exit(runMain(os.Args[1:], os.Stdout, os.Stderr))
}

// runMain runs deflect with args and returns the exit status: 0 on success,
// 1 on a failed run, 2 on bad usage.
func runMain(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		printHelp(stderr)
		return 2
	}
	name, rest := args[0], args[1:]
	switch name {
	case "help", "-h", "-help", "--help":
		if len(rest) > 0 {
			if c, ok := registry[rest[0]]; ok {
				printCommandHelp(stdout, c, newFlagSet(c, stdout))
				return 0
			}
			fmt.Fprintf(stderr, "deflect: unknown command %q\n", rest[0])
			return 2
		}
		printHelp(stdout)
		return 0
	case "version", "-version", "--version":
		fmt.Fprintln(stdout, "deflect", version)
		return 0
	}
	c, ok := registry[name]
	if !ok {
		fmt.Fprintf(stderr, "deflect: unknown command %q; run \"deflect help\"\n", name)
		return 2
	}
	fs := newFlagSet(c, stderr)
	if err := fs.Parse(interleave(fs, rest)); err != nil {
		if errors.Is(err, flag.ErrHelp) {
			printCommandHelp(stdout, c, newFlagSet(c, stdout))
			return 0
		}
		return 2
	}
	err := c.run(&runEnv{flags: fs, stdout: stdout, stderr: stderr}, fs.Args())
	if err == nil {
		return 0
	}
	var ue *usageError
	if errors.As(err, &ue) {
		fmt.Fprintf(stderr, "deflect %s: %v\nusage: deflect %s %s\n", c.name, err, c.name, c.usage)
		return 2
	}
	fmt.Fprintf(stderr, "deflect %s: %v\n", c.name, err)
	return 1
}

func newFlagSet(c *command, out io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet("deflect "+c.name, flag.ContinueOnError)
	fs.SetOutput(out)
	fs.Usage = func() { printCommandHelp(out, c, fs) }
	if c.setFlags != nil {
		c.setFlags(fs)
	}
	return fs
}

// interleave moves flags that follow positional arguments to the front, so
// that "deflect inspect a.csv --json" works as users expect. Everything after
// a "--" stays positional.
func interleave(fs *flag.FlagSet, args []string) []string {
	var flags, pos []string
	for i := 0; i < len(args); i++ {
		a := args[i]
		if a == "--" {
			pos = append(pos, args[i+1:]...)
			break
		}
		if !strings.HasPrefix(a, "-") || a == "-" {
			pos = append(pos, a)
			continue
		}
		flags = append(flags, a)
		name := strings.TrimLeft(a, "-")
		if strings.Contains(name, "=") {
			continue
		}
		if f := fs.Lookup(name); f != nil && !isBoolFlag(f) && i+1 < len(args) {
			i++
			flags = append(flags, args[i])
		}
	}
	return append(flags, append([]string{"--"}, pos...)...)
}

func isBoolFlag(f *flag.Flag) bool {
	b, ok := f.Value.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}

func printHelp(w io.Writer) {
	fmt.Fprint(w, `deflect fits gravitational-lens models directly to interferometric visibilities.

usage: deflect COMMAND [flags] [arguments]

commands:
`)
	names := make([]string, 0, len(registry))
	for n := range registry {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-10s %s\n", n, registry[n].summary)
	}
	fmt.Fprint(w, `  help       show this list, or "deflect help COMMAND"
  version    print the deflect version

Run "deflect COMMAND -h" for a command's flags.
`)
}

func printCommandHelp(w io.Writer, c *command, fs *flag.FlagSet) {
	fmt.Fprintf(w, "usage: deflect %s %s\n\n%s\n", c.name, c.usage, c.summary)
	if c.help != "" {
		fmt.Fprintf(w, "\n%s\n", strings.TrimSpace(c.help))
	}
	has := false
	fs.VisitAll(func(*flag.Flag) { has = true })
	if has {
		fmt.Fprintln(w, "\nflags:")
		fs.SetOutput(w)
		fs.PrintDefaults()
	}
}
