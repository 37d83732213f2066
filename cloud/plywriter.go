package cloud

import (
	"bufio"
	"encoding/binary"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"strconv"
	"strings"

	"gonum.org/v1/gonum/spatial/r3"
)

// countWidth is the number of digits of the vertex count in a header that
// PLYWriter writes before it knows the count. The count is zero-padded
// (`element vertex 000000000001234`), which PLY readers parse as the
// decimal integer it is; 15 digits allow up to 10^15 − 1 points.
const countWidth = 15

// PLYLayout describes the vertex records a PLYWriter writes: double x, y,
// z, then one float (float32) property per Extra name, then uchar red,
// green, blue when Color is set.
type PLYLayout struct {
	Extra    []string // names of extra float properties, such as "deviation_mm"
	Color    bool     // write uchar red, green, blue
	Comments []string // header comment lines, one line each
}

// PLYWriter streams points to a binary little-endian PLY file whose vertex
// count is written on Close.
type PLYWriter struct {
	w       io.WriteSeeker
	closer  io.Closer
	bw      *bufio.Writer
	layout  PLYLayout
	countAt int64 // offset of the count digits
	n       int64
	rec     []byte
	err     error
}

// CreatePLY creates (or truncates) the file at path and writes the header
// of a PLY file with layout l.
func CreatePLY(path string, l PLYLayout) (*PLYWriter, error) {
	f, err := os.Create(path)
	if err != nil {
		return nil, err
	}
	w, err := NewPLYWriter(f, l)
	if err != nil {
		f.Close()
		return nil, err
	}
	w.closer = f
	return w, nil
}

// NewPLYWriter writes the header of a PLY file with layout l to w, which
// must be positioned at its start. Close patches the count through Seek.
func NewPLYWriter(w io.WriteSeeker, l PLYLayout) (*PLYWriter, error) {
	for _, name := range append(append([]string{}, l.Extra...), "x", "y", "z") {
		if name == "" || strings.ContainsAny(name, " \t\r\n") {
			return nil, fmt.Errorf("cloud: PLY property name %q must be one word", name)
		}
	}
	var h strings.Builder
	h.WriteString("ply\nformat binary_little_endian 1.0\n")
	for _, c := range l.Comments {
		if strings.ContainsAny(c, "\r\n") {
			return nil, fmt.Errorf("cloud: PLY comment %q must be one line", c)
		}
		h.WriteString("comment " + c + "\n")
	}
	h.WriteString("element vertex ")
	countAt := int64(h.Len())
	h.WriteString(strings.Repeat("0", countWidth) + "\n")
	h.WriteString("property double x\nproperty double y\nproperty double z\n")
	for _, name := range l.Extra {
		h.WriteString("property float " + name + "\n")
	}
	if l.Color {
		h.WriteString("property uchar red\nproperty uchar green\nproperty uchar blue\n")
	}
	h.WriteString("end_header\n")
	bw := bufio.NewWriterSize(w, 1<<16)
	if _, err := bw.WriteString(h.String()); err != nil {
		return nil, err
	}
	rec := 24 + 4*len(l.Extra)
	if l.Color {
		rec += 3
	}
	return &PLYWriter{w: w, bw: bw, layout: l, countAt: countAt, rec: make([]byte, rec)}, nil
}

// Write appends the points p. extra holds one slice per PLYLayout.Extra
// name, each parallel to p (values are stored as float32); rgb is parallel
// to p when the layout has Color, else nil.
func (w *PLYWriter) Write(p []r3.Vec, extra [][]float64, rgb [][3]uint8) error {
	if w.err != nil {
		return w.err
	}
	if len(extra) != len(w.layout.Extra) {
		return fmt.Errorf("cloud: PLYWriter.Write got %d extra columns, the layout has %d", len(extra), len(w.layout.Extra))
	}
	for k, e := range extra {
		if len(e) != len(p) {
			return fmt.Errorf("cloud: PLYWriter.Write: extra %s has %d values for %d points", w.layout.Extra[k], len(e), len(p))
		}
	}
	if w.layout.Color != (rgb != nil) || rgb != nil && len(rgb) != len(p) {
		return fmt.Errorf("cloud: PLYWriter.Write: %d colours for %d points (layout colour %v)", len(rgb), len(p), w.layout.Color)
	}
	if w.n+int64(len(p)) > maxCount {
		return fmt.Errorf("cloud: PLYWriter: more than %d points", int64(maxCount))
	}
	le := binary.LittleEndian
	b := w.rec
	for i, q := range p {
		le.PutUint64(b[0:], math.Float64bits(q.X))
		le.PutUint64(b[8:], math.Float64bits(q.Y))
		le.PutUint64(b[16:], math.Float64bits(q.Z))
		o := 24
		for _, e := range extra {
			le.PutUint32(b[o:], math.Float32bits(float32(e[i])))
			o += 4
		}
		if rgb != nil {
			copy(b[o:], rgb[i][:])
		}
		if _, err := w.bw.Write(b); err != nil {
			w.err = err
			return err
		}
	}
	w.n += int64(len(p))
	return nil
}

// maxCount is the largest count the header's countWidth digits hold.
const maxCount = 999_999_999_999_999

// Count returns the number of points written so far.
func (w *PLYWriter) Count() int64 { return w.n }

// Close flushes the points, writes the vertex count into the header and,
// for a writer from CreatePLY, closes the file.
func (w *PLYWriter) Close() error {
	err := w.err
	if err == nil {
		err = w.bw.Flush()
	}
	if err == nil {
		_, err = w.w.Seek(w.countAt, io.SeekStart)
	}
	if err == nil {
		digits := strconv.FormatInt(w.n, 10)
		_, err = io.WriteString(w.w, strings.Repeat("0", countWidth-len(digits))+digits)
	}
	if err == nil {
		_, err = w.w.Seek(0, io.SeekEnd)
	}
	if w.closer != nil {
		err = errors.Join(err, w.closer.Close())
		w.closer = nil
	}
	if w.err == nil {
		w.err = errors.New("cloud: PLYWriter is closed")
	}
	return err
}
