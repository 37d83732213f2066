// Command saddlecheck checks as-built hyperbolic-paraboloid (saddle) shells
// against their design: it reads survey points, measures every point's signed
// orthogonal deviation from the design surface, fits the as-built saddle,
// decides conformity against tolerance and writes CSV, JSON and HTML reports.
//
// Usage:
//
//	saddlecheck <command> [flags]
//
// Run `saddlecheck help` for the list of commands and `saddlecheck <command>
// --help` for each command's flags and an example.
//
// Exit codes: 0 conforming, 1 nonconforming or inconclusive, 2 usage or input
// error.
package main

import (
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/pprof"
	"sort"
)

// Exit codes.
const (
	exitOK      = 0 // conforming (or a command that decides nothing succeeded)
	exitVerdict = 1 // nonconforming or inconclusive
	exitUsage   = 2 // usage or input error
)

// errVerdict is returned by a command that ran to completion but whose
// verdict is nonconforming or inconclusive.
var errVerdict = errors.New("verdict is not conforming")

// errUsage marks command-line mistakes (the message is already printed).
var errUsage = errors.New("usage error")

type command struct {
	summary string
	run     func(args []string, stdout, stderr io.Writer) error
}

var commands = map[string]command{}

func register(name, summary string, run func(args []string, stdout, stderr io.Writer) error) {
	commands[name] = command{summary, run}
}

func main() {
	// SADDLECHECK_CPUPROFILE=FILE writes a CPU profile (go tool pprof) of
	// the run, for performance work.
	if path := os.Getenv("SADDLECHECK_CPUPROFILE"); path != "" {
		if f, err := os.Create(path); err == nil {
			pprof.StartCPUProfile(f)
			code := run(os.Args[1:], os.Stdout, os.Stderr)
			pprof.StopCPUProfile()
			f.Close()
			os.Exit(code)
		}
	}
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}

// run executes the command line args and returns the process exit code.
func run(args []string, stdout, stderr io.Writer) int {
	if len(args) == 0 || args[0] == "help" || args[0] == "-h" || args[0] == "--help" {
		usage(stdout)
		if len(args) == 0 {
			return exitUsage
		}
		return exitOK
	}
	if args[0] == "version" || args[0] == "--version" {
		fmt.Fprintln(stdout, "saddlecheck", version)
		return exitOK
	}
	c, ok := commands[args[0]]
	if !ok {
		fmt.Fprintf(stderr, "saddlecheck: unknown command %q\n\n", args[0])
		usage(stderr)
		return exitUsage
	}
	err := c.run(args[1:], stdout, stderr)
	switch {
	case err == nil:
		return exitOK
	case errors.Is(err, errVerdict):
		return exitVerdict
	case errors.Is(err, errUsage):
		return exitUsage
	default:
		fmt.Fprintf(stderr, "saddlecheck %s: %v\n", args[0], err)
		return exitUsage
	}
}

func usage(w io.Writer) {
	fmt.Fprintln(w, "saddlecheck — check as-built hyperbolic-paraboloid shells against their design")
	fmt.Fprintln(w, "\nUsage: saddlecheck <command> [flags]   (saddlecheck <command> --help for details)")
	fmt.Fprintln(w, "\nCommands:")
	names := make([]string, 0, len(commands))
	for n := range commands {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, n := range names {
		fmt.Fprintf(w, "  %-9s %s\n", n, commands[n].summary)
	}
	fmt.Fprintln(w, "\nExit codes: 0 conforming, 1 nonconforming or inconclusive, 2 usage or input error.")
}
