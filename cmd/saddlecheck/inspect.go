package main

import (
	"flag"
	"fmt"
	"io"
	"strings"

	"saddlecheck/cloud"
)

func init() {
	register("inspect", "show what a points file holds, without checking anything", runInspect)
}

const inspectHelp = `Usage: saddlecheck inspect [--units U] [--columns LIST] FILE [FILE ...]

Prints what each points file holds — format (detected from the content),
header facts (version, counts, scale and offset, scans and poses, CRS text),
the columns as understood, the unit, the number of records and rejected rows,
duplicate ids and the bounds — without checking anything against a design.

Example:
  saddlecheck inspect shots.csv scan.las
  saddlecheck inspect --columns id,n,e,z,code --units us-ft fieldbook.txt
`

func runInspect(args []string, stdout, stderr io.Writer) error {
	fs := newFlags("inspect", inspectHelp, stderr)
	units := fs.String("units", "m", "unit of the coordinates: m, mm, ft, us-ft")
	columns := fs.String("columns", "", "column order of a headerless text file, e.g. id,n,e,z,code")
	if err := fs.Parse(args); err != nil {
		if err == flag.ErrHelp {
			return nil
		}
		return errUsage
	}
	if fs.NArg() == 0 {
		return usageErr(stderr, "inspect", "name at least one file")
	}
	unit, err := cloud.ParseUnit(*units)
	if err != nil {
		return usageErr(stderr, "inspect", "%v", err)
	}
	cols := splitColumns(*columns)
	for _, path := range fs.Args() {
		r, err := cloud.Open(path, cloud.Options{Unit: unit, Columns: cols})
		if err != nil {
			return err
		}
		s, err := cloud.Scan(r)
		r.Close()
		if err != nil {
			return withFile(path, err)
		}
		in := s.Info
		fmt.Fprintf(stdout, "%s\n", path)
		fmt.Fprintf(stdout, "  format     %s\n", in.Format)
		if in.Count >= 0 {
			fmt.Fprintf(stdout, "  announced  %d records\n", in.Count)
		}
		fmt.Fprintf(stdout, "  records    %d (%d rejected)\n", s.Count, s.Rejected)
		if len(in.Columns) > 0 {
			fmt.Fprintf(stdout, "  columns    %s\n", strings.Join(in.Columns, ", "))
		}
		fmt.Fprintf(stdout, "  unit       %s (1 unit = %g m)\n", in.Unit.Name, in.Unit.Metres)
		if s.Count > s.Rejected {
			fmt.Fprintf(stdout, "  bounds     x %.4f … %.4f, y %.4f … %.4f, z %.4f … %.4f (m)\n",
				s.Min.X, s.Max.X, s.Min.Y, s.Max.Y, s.Min.Z, s.Max.Z)
		}
		if s.DuplicateIDs > 0 {
			fmt.Fprintf(stdout, "  duplicates %d records repeat an earlier id\n", s.DuplicateIDs)
		}
		for _, f := range in.Facts {
			fmt.Fprintf(stdout, "  %-10s %s\n", f.Key, f.Value)
		}
		for _, w := range in.Warnings {
			fmt.Fprintf(stdout, "  warning    %s\n", w)
		}
	}
	return nil
}
