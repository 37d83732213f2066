package cloud

import (
	"fmt"
	"math"
	"strings"
)

// DefaultChunk is the number of records a reader returns per Read unless the
// caller asks for another: large enough to amortise per-chunk work, small
// enough that a few chunks per core stay in cache-friendly memory.
const DefaultChunk = 32768

// Reader streams the records of one input file.
type Reader interface {
	// Read resets c and fills it with up to max consecutive records
	// (max <= 0 means DefaultChunk). It returns io.EOF, with c empty, once
	// every record has been returned. Any other error is fatal for the file
	// and names the line or byte offset (a *ParseError or *FormatError).
	Read(c *Chunk, max int) error
	// Info describes the file as far as its header (or first lines) tell.
	Info() Info
	// Close releases the file.
	Close() error
}

// Info describes an input file without reading its body.
type Info struct {
	Path   string
	Format string // "csv", "ply-ascii", "ply-binary_little_endian", "las", "e57", …
	// Count is the number of records the header announces, or -1 if unknown.
	Count int64
	// Columns names the fields in file order as understood ("id", "n", "e",
	// "z", "code", "intensity", …).
	Columns []string
	Unit    Unit
	// Facts holds further header facts for `inspect`, in display order
	// (version, scale, offset, scans, poses, CRS text, …).
	Facts []Fact
	// Warnings lists things the user should know (duplicate ids, header
	// guesses, float32 coordinates at site magnitudes, …).
	Warnings []string
}

// Fact is one labelled header fact.
type Fact struct{ Key, Value string }

// Options controls how a file is read.
type Options struct {
	// Unit of the file's coordinates; the zero value means metres.
	Unit Unit
	// Columns names the columns of a headerless delimited file, such as
	// []string{"id", "n", "e", "z", "code"}. Nil means detect a header.
	Columns []string
}

// Unit is a length unit with its size in metres.
type Unit struct {
	Name   string  // "m", "mm", "ft", "us-ft"
	Metres float64 // size of one unit in metres
}

// Units known to ParseUnit. The foot values are exact by definition:
// international foot 0.3048 m and US survey foot 1200/3937 m (NIST,
// Federal Register 85 FR 62698, 2020; NIST SP 811 appendix B).
var (
	Metre    = Unit{"m", 1}
	Milli    = Unit{"mm", 0.001}
	Foot     = Unit{"ft", 0.3048}
	SurveyFt = Unit{"us-ft", 1200.0 / 3937.0}
)

// ParseUnit returns the unit named s: m, mm, ft (international foot) or
// us-ft (US survey foot).
func ParseUnit(s string) (Unit, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "m", "metre", "meter", "metres", "meters":
		return Metre, nil
	case "mm", "millimetre", "millimeter":
		return Milli, nil
	case "ft", "foot", "feet", "ft-intl", "international-foot":
		return Foot, nil
	case "us-ft", "usft", "ft-us", "us-survey-foot", "survey-foot":
		return SurveyFt, nil
	}
	return Unit{}, fmt.Errorf("unknown unit %q: use m, mm, ft (international foot, 0.3048 m) or us-ft (US survey foot, 1200/3937 m)", s)
}

// ToMetres returns v (in u) in metres.
func (u Unit) ToMetres(v float64) float64 {
	if u.Metres == 0 || u.Metres == 1 {
		return v
	}
	return v * u.Metres
}

// Format is a registered point-file format.
type Format struct {
	Name string
	// Match reports whether the first bytes of a file (up to 4096) are of
	// this format.
	Match func(head []byte) bool
	// Open opens the file at path (already sniffed as this format).
	Open func(path string, opt Options) (Reader, error)
}

var formats []Format

// RegisterFormat adds a format to those Open sniffs, ahead of the built-in
// delimited-text fallback. Sub-packages call it from init.
func RegisterFormat(f Format) { formats = append(formats, f) }

// finite reports whether v is neither NaN nor ±Inf.
func finite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
