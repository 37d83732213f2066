package cloud

import (
	"gonum.org/v1/gonum/spatial/r3"
)

// Attr is one optional named per-point attribute (intensity, classification,
// GPS time, …) as a slice parallel to Chunk.P.
type Attr struct {
	Name   string
	Values []float64
}

// Chunk is a run of consecutive input records of one source, in input order.
// All slices that are not nil have the same length, Len().
//
// A rejected record (Reject[i] != "") keeps its position; its P[i] is the
// zero vector and must not be used.
type Chunk struct {
	// Source is the index of the input file among those given to the command.
	Source int
	// P holds site coordinates in metres (float64), after unit conversion.
	P []r3.Vec
	// ID holds the point identifier as written in the file. It is nil for
	// formats without identifiers; then the record number Line[i] is the id.
	ID []string
	// Code holds the survey code or description; nil where the format has none.
	Code []string
	// Station holds the id of the instrument station each record was
	// observed from, where the file carries one (a station/stn/setup
	// column); nil otherwise.
	Station []string
	// Line holds the 1-based source line (text formats) or 1-based record
	// number (binary formats) of every record.
	Line []int64
	// Reject holds "" for a good record, else the reason it was rejected,
	// such as `non-numeric "12,a" in column e`.
	Reject []string
	// Attr holds optional named attributes, each parallel to P.
	Attr []Attr
}

// Len returns the number of records in c.
func (c *Chunk) Len() int { return len(c.Line) }

// Reset empties c, keeping its capacity (and attribute names) for reuse.
func (c *Chunk) Reset() {
	c.P = c.P[:0]
	if c.ID != nil {
		c.ID = c.ID[:0]
	}
	if c.Code != nil {
		c.Code = c.Code[:0]
	}
	if c.Station != nil {
		c.Station = c.Station[:0]
	}
	c.Line = c.Line[:0]
	c.Reject = c.Reject[:0]
	for i := range c.Attr {
		c.Attr[i].Values = c.Attr[i].Values[:0]
	}
}

// PointID returns the identifier of record i: the file's id where it has
// one, else the record number.
func (c *Chunk) PointID(i int) string {
	if c.ID != nil {
		return c.ID[i]
	}
	return itoa(c.Line[i])
}

func itoa(n int64) string {
	var b [20]byte
	i := len(b)
	neg := n < 0
	if neg {
		n = -n
	}
	for {
		i--
		b[i] = byte('0' + n%10)
		n /= 10
		if n == 0 {
			break
		}
	}
	if neg {
		i--
		b[i] = '-'
	}
	return string(b[i:])
}
