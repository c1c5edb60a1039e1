package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"
	"time"
)

// env bundles what every subcommand gets from the outside world.
type env struct {
	getenv func(string) string
	stdout io.Writer
	stderr io.Writer
	now    func() time.Time
}

// command is one subcommand: its flags are declared in setup and its work
// done in run, after flags and environment variables are applied.
type command struct {
	name    string
	args    string // positional arguments, for the usage line
	summary string
	detail  string
	setup   func(f *flags) func(ctx context.Context, e env, args []string) error
}

func commands() []command {
	return []command{serveCommand(), importCommand(), windowCommand(), trainCommand(), modelCommand(), scoreCommand(), demoCommand(), healthCommand(), backupCommand()}
}

// errShown marks an error whose details were already printed.
var errShown = errors.New("")

func run(ctx context.Context, args []string, getenv func(string) string, stdout, stderr io.Writer) error {
	e := env{getenv: getenv, stdout: stdout, stderr: stderr, now: time.Now}
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		if len(args) >= 2 {
			for _, c := range commands() {
				if c.name == args[1] {
					f := newFlags(c.name)
					c.setup(f)
					printCommandHelp(stdout, c, f)
					return nil
				}
			}
			return fmt.Errorf("unknown command %q; run \"ebb help\"", args[1])
		}
		printHelp(stdout)
		if len(args) == 0 {
			return errors.New("no command given")
		}
		return nil
	}
	for _, c := range commands() {
		if c.name != args[0] {
			continue
		}
		f := newFlags(c.name)
		do := c.setup(f)
		rest, err := f.parse(args[1:], getenv)
		if errors.Is(err, flag.ErrHelp) {
			printCommandHelp(stdout, c, f)
			return nil
		}
		if err != nil {
			return fmt.Errorf("%s: %w (see \"ebb %s --help\")", c.name, err, c.name)
		}
		return do(ctx, e, rest)
	}
	return fmt.Errorf("unknown command %q; run \"ebb help\"", args[0])
}

func printHelp(w io.Writer) {
	fmt.Fprintln(w, `ebb turns an order log into a churn definition, a model of who will lapse,
a weekly at-risk list and evidence of whether outreach worked.

Usage: ebb COMMAND [flags] [arguments]

Commands:`)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for _, c := range commands() {
		fmt.Fprintf(tw, "  %s\t%s\n", c.name, c.summary)
	}
	fmt.Fprintf(tw, "  help [COMMAND]\tshow this help, or one command's flags\n")
	tw.Flush()
	fmt.Fprintln(w, `
Every flag can also be set by an environment variable: --db is EBB_DB,
--on-error is EBB_ON_ERROR. A flag on the command line beats the variable,
which beats the default.

Start here:  ebb serve --demo     (then open http://127.0.0.1:8080)`)
}

func printCommandHelp(w io.Writer, c command, f *flags) {
	fmt.Fprintf(w, "Usage: ebb %s [flags] %s\n\n%s\n", c.name, c.args, c.summary)
	if c.detail != "" {
		fmt.Fprintf(w, "\n%s\n", strings.TrimSpace(c.detail))
	}
	fmt.Fprintln(w, "\nFlags:")
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	for _, d := range f.docs {
		name := "--" + d.name
		if d.arg != "" {
			name += " " + d.arg
		}
		def := ""
		if d.def != "" {
			def = fmt.Sprintf(" (default %s)", d.def)
		}
		fmt.Fprintf(tw, "  %s\t%s%s [%s]\n", name, d.usage, def, envName(d.name))
	}
	tw.Flush()
}

// flags is a flag.FlagSet whose every flag falls back to an environment
// variable EBB_NAME, and which prints flags with two dashes and units.
type flags struct {
	fs   *flag.FlagSet
	docs []flagDoc
}

type flagDoc struct {
	name, arg, usage, def string
}

func newFlags(name string) *flags {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	return &flags{fs: fs}
}

func envName(flagName string) string {
	return "EBB_" + strings.ToUpper(strings.ReplaceAll(flagName, "-", "_"))
}

// String declares a string flag; arg names its value in help (FILE, NAME).
func (f *flags) String(p *string, name, def, arg, usage string) {
	f.fs.StringVar(p, name, def, usage)
	f.docs = append(f.docs, flagDoc{name, arg, usage, def})
}

// Bool declares a boolean flag.
func (f *flags) Bool(p *bool, name string, usage string) {
	f.fs.BoolVar(p, name, false, usage)
	f.docs = append(f.docs, flagDoc{name, "", usage, ""})
}

// Int declares an integer flag.
func (f *flags) Int(p *int, name string, def int, arg, usage string) {
	f.fs.IntVar(p, name, def, usage)
	f.docs = append(f.docs, flagDoc{name, arg, usage, strconv.Itoa(def)})
}

// parse applies the command line, then the environment for flags the
// command line did not set. Flags may come before or after positional
// arguments.
func (f *flags) parse(args []string, getenv func(string) string) ([]string, error) {
	var rest []string
	for {
		if err := f.fs.Parse(args); err != nil {
			return nil, err
		}
		args = f.fs.Args()
		if len(args) == 0 {
			break
		}
		if args[0] == "--" {
			rest = append(rest, args[1:]...)
			break
		}
		rest = append(rest, args[0])
		args = args[1:]
	}
	set := map[string]bool{}
	f.fs.Visit(func(fl *flag.Flag) { set[fl.Name] = true })
	var err error
	names := []string{}
	f.fs.VisitAll(func(fl *flag.Flag) { names = append(names, fl.Name) })
	sort.Strings(names)
	for _, n := range names {
		if set[n] {
			continue
		}
		if v := getenv(envName(n)); v != "" {
			if e := f.fs.Set(n, v); e != nil && err == nil {
				err = fmt.Errorf("environment variable %s=%q: %w", envName(n), v, e)
			}
		}
	}
	return rest, err
}

// openFile opens a named input file; "-" is standard input.
func openFile(name string) (io.ReadCloser, int64, error) {
	if name == "-" {
		return io.NopCloser(os.Stdin), 0, nil
	}
	f, err := os.Open(name)
	if err != nil {
		return nil, 0, err
	}
	var size int64
	if st, err := f.Stat(); err == nil {
		size = st.Size()
	}
	return f, size, nil
}
