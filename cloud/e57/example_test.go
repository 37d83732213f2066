package e57

import (
	"bytes"
	"fmt"
	"io"

	"saddlecheck/cloud"
)

// ExampleNewReader reads a small synthetic E57 file (written by the test
// helper buildE57) with one spherical scan: range 1 m, azimuth −π,
// elevation −1.5 rad for the first record, so x = cos(−1.5)·cos(−π) ≈
// −0.0707 and z = sin(−1.5) ≈ −0.9975.
func ExampleNewReader() {
	data := buildE57(synthScans()[1:2], 200)
	r, err := NewReader(bytes.NewReader(data), int64(len(data)), cloud.Options{})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(r.Info().Count, "records in", len(r.Scans()), "scan")
	var c cloud.Chunk
	if err := r.Read(&c, 2); err != nil && err != io.EOF {
		fmt.Println(err)
		return
	}
	for i, p := range c.P {
		fmt.Printf("record %d: %.4f %.4f %.4f\n", c.Line[i], p.X, p.Y, p.Z)
	}
	// Output:
	// 500 records in 1 scan
	// record 1: -0.0707 -0.0000 -0.9975
	// record 2: -0.0785 -0.0010 -1.0069
}
