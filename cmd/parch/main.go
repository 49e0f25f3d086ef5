// Command parch records and analyses bench drying trials of foods: a balance
// on a serial line (or a growing log file, or a built-in demo run) into an
// append-only session log, with notes made as the run goes.
package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
)

// version is the program's version, written into every session log.
const version = "0.1.0"

const program = "parch " + version

// Exit codes: 0 success, 1 runtime failure, 2 usage error.
const (
	exitOK    = 0
	exitFail  = 1
	exitUsage = 2
)

// usageError is a mistake on the command line; main prints it with the one
// line that fixes it and exits 2.
type usageError struct{ msg string }

func (e usageError) Error() string { return e.msg }

func usagef(format string, a ...any) error { return usageError{fmt.Sprintf(format, a...)} }

type command struct {
	name    string
	summary string
	run     func(args []string, stdout, stderr io.Writer) error
}

var commands []command

func init() {
	commands = []command{
		{"demo", "the live dashboard on the built-in demo (an invented apple-ring run), recorded to a session log", runDemo},
		{"record", "record a balance, a growing file or the demo into a session log, headless", runRecord},
		{"note", "add a note (bend test, case hardening, a piece removed...) to a session log", runNote},
		{"simulate", "write an invented drying run as CSV, for trying the file source", runSimulate},
		{"watch", "the live dashboard: record a source, or watch a log another parch records", runWatch},
		{"report", "analyse a session log or a CSV: moisture, rate, periods, models, diffusivity, projection", runReport},
		{"compare", "several runs side by side: replicates, temperatures, activation energy (Arrhenius)", runCompare},
	}
}

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		// No command is a usage error: the list goes to the error stream.
		printHelp(stderr)
		return exitUsage
	}
	if args[0] == "help" || args[0] == "-h" || args[0] == "--help" || args[0] == "-help" {
		if len(args) > 1 {
			return run([]string{args[1], "-h"}, stdout, stderr)
		}
		printHelp(stdout)
		return exitOK
	}
	if args[0] == "version" || args[0] == "--version" {
		fmt.Fprintln(stdout, program)
		return exitOK
	}
	for _, c := range commands {
		if c.name != args[0] {
			continue
		}
		err := c.run(args[1:], stdout, stderr)
		var ue usageError
		switch {
		case err == nil, errors.Is(err, flag.ErrHelp):
			return exitOK
		case errors.As(err, &ue):
			fmt.Fprintf(stderr, "parch %s: %s\nrun 'parch %s -h' for its flags\n", c.name, ue.msg, c.name)
			return exitUsage
		default:
			fmt.Fprintf(stderr, "parch %s: %v\n", c.name, err)
			return exitFail
		}
	}
	fmt.Fprintf(stderr, "parch: unknown command %q\nrun 'parch help' for the commands\n", args[0])
	return exitUsage
}

func printHelp(w io.Writer) {
	fmt.Fprintf(w, `parch: record and analyse bench drying trials of foods

Usage: parch COMMAND [flags]

Commands:
`)
	for _, c := range commands {
		fmt.Fprintf(w, "  %-9s %s\n", c.name, c.summary)
	}
	fmt.Fprint(w, `
Sources (the same flags in every command that reads live data):
  --port DEVICE    a balance on a serial line (/dev/ttyUSB0, /dev/serial/by-id/...)
  --follow FILE    a growing CSV/TSV file or another parch session log
  --demo           the built-in invented demo run

'parch COMMAND -h' shows a command's flags.
Cautions: moisture content alone does not make a dried food safe: water activity
does. Follow local food-safety regulation and your plant's food safety plan.
Dryers run hot: hot surfaces and heaters; check a balance on a hot dryer with a
reference mass.
`)
}

type flagUsage struct {
	text string
	w    io.Writer
}

var usages = map[*flag.FlagSet]flagUsage{}

// newFlagSet makes a flag set whose errors come back as usage errors.
func newFlagSet(name, usage string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(io.Discard) // errors are printed once, by run
	// flag calls Usage on every parse error; the full list is printed only
	// for -h (see parseFlags), errors get one line and a pointer to -h.
	fs.Usage = func() {}
	usages[fs] = flagUsage{usage, stderr}
	return fs
}

// parseFlags parses args, allowing flags after positional arguments
// (`parch note --session S.jsonl "text" --kind note`).
func parseFlags(fs *flag.FlagSet, args []string) ([]string, error) {
	var pos []string
	for {
		if err := fs.Parse(args); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				u := usages[fs]
				fmt.Fprintf(u.w, "Usage: parch %s\n\nFlags:\n", u.text)
				fs.SetOutput(u.w)
				fs.PrintDefaults()
				return nil, err
			}
			return nil, usageError{err.Error()}
		}
		args = fs.Args()
		if len(args) == 0 {
			return pos, nil
		}
		if args[0] == "--" {
			return append(pos, args[1:]...), nil
		}
		pos = append(pos, args[0])
		args = args[1:]
	}
}
