package main

import (
	"flag"
	"fmt"
	"io"
	"os"
	"strings"
)

// multiFlag collects a repeatable string flag.
type multiFlag []string

func (m *multiFlag) String() string     { return strings.Join(*m, ",") }
func (m *multiFlag) Set(s string) error { *m = append(*m, s); return nil }

// newFlags returns a FlagSet that prints help (with its example) to
// stderr and never exits the process.
func newFlags(name, help string, stderr io.Writer) *flag.FlagSet {
	fs := flag.NewFlagSet(name, flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprint(stderr, help)
		fmt.Fprintln(stderr, "\nFlags:")
		fs.PrintDefaults()
	}
	return fs
}

// parseFlags parses args; it returns (true, nil) when --help was asked
// for, and errUsage for a flag mistake (already printed).
func parseFlags(fs *flag.FlagSet, args []string) (help bool, err error) {
	if err := fs.Parse(args); err != nil {
		if err == flag.ErrHelp {
			return true, nil
		}
		return false, errUsage
	}
	if fs.NArg() > 0 {
		fmt.Fprintf(fs.Output(), "%s: unexpected argument %q (flags go before nothing else; see --help)\n", fs.Name(), fs.Arg(0))
		return false, errUsage
	}
	return false, nil
}

// usageErr prints a usage problem and returns errUsage.
func usageErr(stderr io.Writer, cmd, format string, a ...any) error {
	fmt.Fprintf(stderr, "saddlecheck %s: %s (see 'saddlecheck %s --help')\n", cmd, fmt.Sprintf(format, a...), cmd)
	return errUsage
}

// isTerminal reports whether w is a character device (progress output is
// shown only there).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	if !ok {
		return false
	}
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

// withFile names the file in err unless the error (typed errors of the
// readers do) already names it.
func withFile(path string, err error) error {
	if err == nil || strings.Contains(err.Error(), path) {
		return err
	}
	return fmt.Errorf("%s: %w", path, err)
}

// splitColumns turns a --columns list ("id, n,e,z") into names.
func splitColumns(s string) []string {
	if s == "" {
		return nil
	}
	var cols []string
	for _, c := range strings.Split(s, ",") {
		cols = append(cols, strings.TrimSpace(c))
	}
	return cols
}
