package cloud

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// Sentinel errors, for errors.Is. They appear wrapped in a *ParseError (text
// formats) or a *FormatError (binary formats and sniffing), and, except for
// ErrTooManyRejected and ErrUnknownFormat, as the cause of a rejected record.
var (
	// ErrFieldCount: a row has more fields than the columns allow, or
	// --columns names a column twice.
	ErrFieldCount = errors.New("wrong number of fields")
	// ErrNumber: a numeric field does not parse as a number.
	ErrNumber = errors.New("not a number")
	// ErrMissingColumn: a needed column (e, n or z) is not named by the
	// header or --columns, or a row lacks it.
	ErrMissingColumn = errors.New("missing column")
	// ErrNotFinite: a coordinate is NaN or ±Inf.
	ErrNotFinite = errors.New("not finite")
	// ErrRange: a coordinate's magnitude exceeds MaxCoord.
	ErrRange = errors.New("out of range")
	// ErrTooManyRejected: more than half of a file's data rows were rejected,
	// which almost always means a wrong delimiter, decimal separator or
	// column order rather than bad shots.
	ErrTooManyRejected = errors.New("too many rejected rows")
	// ErrUnknownFormat: Open recognised none of the formats in a file.
	ErrUnknownFormat = errors.New("unknown file format")
)

// errClosed is the error of a Read after Close.
var errClosed = errors.New("read after Close")

// MaxCoord is the largest coordinate magnitude a reader accepts, in metres.
// 1e8 m is far beyond any projected grid (eastings and northings stay below
// 1e7 m), so a larger value is a unit or column mistake (common practice).
const MaxCoord = 1e8

// ParseError is a fatal error in a text file. Line is the 1-based physical
// line (0 when the error concerns no single line, such as a bad --columns
// list); Column is the 1-based field number (0 when not known) and Field the
// column's name as understood ("e", "z", "intensity").
type ParseError struct {
	Path   string
	Line   int
	Column int
	Field  string
	Err    error
}

func (e *ParseError) Error() string {
	var b strings.Builder
	b.WriteString(e.Path)
	if e.Line > 0 {
		b.WriteString(":")
		b.WriteString(strconv.Itoa(e.Line))
	}
	switch {
	case e.Column > 0 && e.Field != "":
		fmt.Fprintf(&b, ": column %d (%s)", e.Column, e.Field)
	case e.Column > 0:
		fmt.Fprintf(&b, ": column %d", e.Column)
	case e.Field != "":
		fmt.Fprintf(&b, ": column %s", e.Field)
	}
	b.WriteString(": ")
	msg := "error"
	if e.Err != nil {
		msg = e.Err.Error()
	}
	b.WriteString(msg)
	if h := hint(e.Err); h != "" && !strings.Contains(msg, "--columns") {
		b.WriteString(" (")
		b.WriteString(h)
		b.WriteString(")")
	}
	return b.String()
}

func (e *ParseError) Unwrap() error { return e.Err }

// hint tells the user what to do about err. Error leaves it out when the
// message already tells (names --columns).
func hint(err error) string {
	switch {
	case errors.Is(err, ErrTooManyRejected):
		return "check the delimiter, the decimal separator, --units and the column order; name the columns with --columns if needed"
	case errors.Is(err, ErrMissingColumn):
		return "name the columns with --columns, e.g. --columns id,n,e,z,code"
	case errors.Is(err, ErrFieldCount):
		return "check the delimiter and quote fields that contain it"
	case errors.Is(err, ErrNumber), errors.Is(err, ErrNotFinite):
		return "correct the value or comment the line out with #"
	case errors.Is(err, ErrRange):
		return "check --units and the column order"
	}
	return ""
}

// FormatError is a fatal error in a binary file (or in a PLY header), at
// byte Offset from the start of the file. Err, when not nil, is the cause:
// io.ErrUnexpectedEOF for a truncated record, ErrUnknownFormat, or an
// *UnsupportedError.
type FormatError struct {
	Path   string
	Offset int64
	Msg    string
	Err    error
}

func (e *FormatError) Error() string {
	var b strings.Builder
	b.WriteString(e.Path)
	b.WriteString(": byte offset ")
	b.WriteString(strconv.FormatInt(e.Offset, 10))
	if e.Msg != "" {
		b.WriteString(": ")
		b.WriteString(e.Msg)
	}
	if e.Err != nil {
		b.WriteString(": ")
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

func (e *FormatError) Unwrap() error { return e.Err }

// UnsupportedError reports a valid but unsupported feature of a format,
// such as a PLY version other than 1.0. Readers return it wrapped in a
// *FormatError that gives the file and the offset.
type UnsupportedError struct {
	Format  string // "PLY", …
	Feature string // what is not supported
}

func (e *UnsupportedError) Error() string {
	return "unsupported " + e.Format + " feature: " + e.Feature
}
