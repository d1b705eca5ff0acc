package main

import (
	"context"
	"embed"
	"errors"
	"fmt"
	"io"
	"os"
	"slices"
	"strings"

	"github.com/spf13/pflag"
	"golang.org/x/term"
)

// env is what a command may touch of the outside world, so tests can run commands in-process.
type env struct {
	stdin  io.Reader
	stdout io.Writer
	stderr io.Writer
	tty    bool     // stderr is a terminal: progress bars are drawn
	args   []string // the command line after "sluice", for run manifests
}

func newEnv() *env {
	return &env{stdin: os.Stdin, stdout: os.Stdout, stderr: os.Stderr, tty: term.IsTerminal(int(os.Stderr.Fd()))}
}

// command is one sluice subcommand.
type command interface {
	name() string
	summary() string
	// flags returns the command's flag set, with usage text and examples.
	flags() *pflag.FlagSet
	run(ctx context.Context, e *env, fs *pflag.FlagSet) error
}

// usageError is a mistake in the command line: exit status 2.
type usageError struct{ msg string }

func (u *usageError) Error() string { return u.msg }

func usagef(format string, a ...any) error { return &usageError{fmt.Sprintf(format, a...)} }

// required reports, all together, what a command line left out: each argument names one thing,
// or is "" when it was given.
func required(missing ...string) error {
	switch m := slices.DeleteFunc(missing, func(s string) bool { return s == "" }); len(m) {
	case 0:
		return nil
	case 1:
		return usagef("%s is required", m[0])
	default:
		return usagef("these are required: %s", strings.Join(m, ", "))
	}
}

// flagStr is the value of the string flag name.
func flagStr(fs *pflag.FlagSet, name string) string { v, _ := fs.GetString(name); return v }

// unset is "--name" when the string flag name, or string array, was left empty, else "".
func unset(fs *pflag.FlagSet, name string) string {
	if v := fs.Lookup(name).Value.String(); v == "" || v == "[]" {
		return "--" + name
	}
	return ""
}

// noArgs is what when the command line names nothing after its flags, else "" (see required).
func noArgs(fs *pflag.FlagSet, what string) string {
	if fs.NArg() == 0 {
		return what
	}
	return ""
}

func commands() []command {
	return []command{&indexCmd{}, &pickCmd{}, &whyCmd{}, &diffCmd{}, &verifyCmd{}, &reportCmd{}, &demoCmd{}, &pilotsCmd{}, &planCmd{}, &segmentsCmd{}, &shardCmd{}}
}

// intro is the overview of every command (help/sluice.txt), their list in place of its %s.
func intro(cmds []command) string {
	b, _ := helpFiles.ReadFile("help/sluice.txt") // TestHelpFiles checks it is there
	return fmt.Sprintf(string(b), commandList(cmds))
}

// dispatch runs the command named by args[0] and returns the exit status: 0 done, 1 failed, 2 a
// mistake in the command line.
func dispatch(ctx context.Context, args []string, e *env) int {
	cmds := commands()
	if len(args) == 0 {
		fmt.Fprint(e.stderr, intro(cmds))
		return 2
	}
	e.args = args
	name := args[0]
	switch name {
	case "help", "-h", "--help":
		return help(cmds, args, e)
	case "version", "--version":
		fmt.Fprintln(e.stdout, "sluice", version())
		return 0
	}
	for _, c := range cmds {
		if c.name() == name {
			return runCommand(ctx, c, args[1:], e)
		}
	}
	fmt.Fprintf(e.stderr, "sluice: no command %q\n\n", name)
	fmt.Fprint(e.stderr, intro(cmds))
	return 2
}

func commandList(cmds []command) string {
	var b strings.Builder
	for _, c := range cmds {
		fmt.Fprintf(&b, "  %-10s  %s\n", c.name(), c.summary())
	}
	return b.String()
}

// help prints the overview, or one command's usage, on stdout: help asked for is output.
func help(cmds []command, args []string, e *env) int {
	if len(args) > 1 && args[0] == "help" {
		if args[1] == "help" {
			fmt.Fprintln(e.stdout, "Usage:\n  sluice help [COMMAND]\n\nShows the commands, or one command's flags and examples.")
			return 0
		}
		for _, c := range cmds {
			if c.name() == args[1] {
				fs := c.flags()
				fs.SetOutput(e.stdout)
				fs.Usage()
				return 0
			}
		}
		fmt.Fprintf(e.stderr, "sluice: no command %q\n", args[1])
		return 2
	}
	fmt.Fprint(e.stdout, intro(cmds))
	return 0
}

// runCommand parses a command's flags and runs it, printing its error with the exit status due.
func runCommand(ctx context.Context, c command, args []string, e *env) int {
	name := c.name()
	fs := c.flags()
	fs.SetOutput(e.stderr)
	for _, a := range args {
		if a == "--" {
			break
		}
		if a == "-h" || a == "--help" { // help asked for is output, on stdout, and a success
			fs.SetOutput(e.stdout)
		}
	}
	// A flag of one value given twice would take the last silently: --index A --index B, say.
	given, twice := map[string]bool{}, ""
	err := fs.ParseAll(args, func(f *pflag.Flag, v string) error {
		if t := f.Value.Type(); given[f.Name] && t != "bool" && !strings.HasSuffix(t, "Array") {
			twice = f.Name
		}
		given[f.Name] = true
		return fs.Set(f.Name, v)
	})
	if errors.Is(err, pflag.ErrHelp) {
		return 0
	} else if err == nil && twice != "" {
		err = fmt.Errorf("--%s is given more than once; it takes one value", twice)
		if twice == "index" {
			err = fmt.Errorf("%w (name several indexes as one set with 'sluice segments' and give that)", err)
		}
	}
	if err != nil {
		err = &usageError{err.Error()}
	} else {
		err = c.run(ctx, e, fs)
	}
	var ue *usageError
	switch {
	case err == nil:
		return 0
	case ctx.Err() != nil && errors.Is(err, ctx.Err()):
		// Ctrl-C or SIGTERM: what was being written was not published, so nothing is half made.
		fmt.Fprintf(e.stderr, "sluice %s: interrupted; nothing was published\n", name)
		return 130
	case errors.As(err, &ue):
		fmt.Fprintf(e.stderr, "sluice %s: %v\nRun 'sluice %s --help' for usage.\n", name, err, name)
		return 2
	default:
		fmt.Fprintf(e.stderr, "sluice %s: %v\n", name, err)
		return 1
	}
}

// helpFiles hold each command's help: its synopsis on the first line, then what it does, then
// "Examples:" and the examples. Kept as text, they read and review as the prose they are.
//
//go:embed help/*.txt
var helpFiles embed.FS

// newFlags makes the flag set of command name, whose usage prints its help file around the flags.
func newFlags(name string) *pflag.FlagSet {
	fs := pflag.NewFlagSet(name, pflag.ContinueOnError)
	fs.SortFlags = false
	fs.Usage = func() {
		b, _ := helpFiles.ReadFile("help/" + name + ".txt") // every command has one (TestHelpFiles)
		synopsis, rest, _ := strings.Cut(string(b), "\n")
		about, examples, _ := strings.Cut(rest, "\nExamples:\n")
		w := fs.Output()
		fmt.Fprintf(w, "Usage:\n  %s\n\n%s\n\nFlags:\n%s", synopsis, strings.TrimSpace(about), fs.FlagUsages())
		if examples != "" {
			fmt.Fprintf(w, "\nExamples:\n%s\n", strings.TrimRight(examples, "\n"))
		}
	}
	return fs
}
