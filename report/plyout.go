package report

import (
	"math"
	"os"
	"path/filepath"

	"gonum.org/v1/gonum/spatial/r3"

	"saddlecheck/cloud"
	"saddlecheck/deviation"
)

// PLYOut is the Sink behind `check --ply-out`: every measured point (not
// the rejected rows, which have no position) as a binary PLY vertex with
// double x, y, z (site metres), float deviation_mm and status_code, and
// uchar red, green, blue from the report's palette (grey for points that
// are outside every patch or far from the shell), so that any
// general-purpose point viewer shows the deviation map.
//
// status_code: 0 used, 1 outside, 2 far (deviation.Status).
type PLYOut struct {
	w      *cloud.PLYWriter
	f      *os.File
	final  string
	spanMM float64
	p      []r3.Vec
	dev    []float64
	st     []float64
	rgb    [][3]uint8
}

// PLYComments are the header comments of the file.
func plyComments(structure string, spanMM float64) []string {
	return []string{
		"saddlecheck checked points: " + structure,
		"deviation_mm: signed orthogonal deviation from the design surface, positive on the design normal side",
		"status_code: 0 used, 1 outside every patch, 2 far from the shell",
		"colour: ColorBrewer PuOr over +/- the last tolerance band; orange above, purple below, grey not used",
	}
}

// NewPLYOut creates the PLY file for path under a temporary name; Close
// renames it into place.
func NewPLYOut(path, structure string, spanMM float64) (*PLYOut, error) {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	f, err := os.CreateTemp(dir, "."+base+".tmp-*")
	if err != nil {
		return nil, err
	}
	w, err := cloud.NewPLYWriter(f, cloud.PLYLayout{Extra: []string{"deviation_mm", "status_code"}, Color: true,
		Comments: plyComments(structure, spanMM)})
	if err != nil {
		f.Close()
		os.Remove(f.Name())
		return nil, err
	}
	return &PLYOut{w: w, f: f, final: path, spanMM: spanMM}, nil
}

// Abort discards the file.
func (o *PLYOut) Abort() {
	if o.f != nil {
		o.f.Close()
		os.Remove(o.f.Name())
		o.f = nil
	}
}

// Consume writes the measured points of r.
func (o *PLYOut) Consume(r *deviation.Result) error {
	c := r.Chunk
	o.p, o.dev, o.st, o.rgb = o.p[:0], o.dev[:0], o.st[:0], o.rgb[:0]
	grey := [3]uint8{0x99, 0x99, 0x99}
	for i, n := 0, c.Len(); i < n; i++ {
		st := r.Status[i]
		if st == deviation.StatusRejected {
			continue
		}
		d := r.Dev[i] * 1000
		o.p = append(o.p, c.P[i])
		o.dev = append(o.dev, d)
		o.st = append(o.st, float64(st))
		if st == deviation.StatusUsed && !math.IsNaN(d) {
			o.rgb = append(o.rgb, Colour(d, o.spanMM))
		} else {
			o.rgb = append(o.rgb, grey)
		}
	}
	return o.w.Write(o.p, [][]float64{o.dev, o.st}, o.rgb)
}

// Close finishes the file (its vertex count is written then) and renames
// it into place.
func (o *PLYOut) Close() error {
	err := finishTemp(o.f, o.final, o.w.Close())
	o.f = nil
	return err
}
